// Who is signed in, and what they may do. Filled once at start (and after a
// token is pasted); the views ask `canEdit()` before showing editing tools.

import { ApiError, getMe, type Me } from './api.ts';
import { clearDevice } from './offline/device.ts';

export interface Session {
  me: Me | null;
  /** False when the server answered 401: show the sign-in view. */
  signedIn: boolean;
}

export const session: Session = { me: null, signedIn: false };

export async function refreshSession(): Promise<Session> {
  try {
    session.me = await getMe();
    session.signedIn = true;
  } catch (err) {
    if (err instanceof ApiError && err.status === 401) {
      session.me = null;
      session.signedIn = false;
      // The session ended (signed out elsewhere, expired or revoked): what this device kept for it goes too.
      void clearDevice();
    } else {
      throw err;
    }
  }
  return session;
}

export const role = (): Me['role'] | 'unknown' => session.me?.role ?? 'unknown';
/** Planners edit; when the role is unknown the server still decides (403 is explained). */
export const canEdit = (): boolean => role() === 'planner' || role() === 'unknown';
export const canRecordReadings = (): boolean => role() !== 'viewer';
