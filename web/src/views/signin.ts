// Sign-in: a one-time link (/signin?token=..., from an invitation or the server's start-up
// line) sets the session cookie; a pasted link or API token is exchanged for the same
// cookie (POST /signin), so every request the page makes is signed in.
import { ApiError } from '../api.ts';
import { signInWithToken } from '../api-team.ts';
import { refreshSession } from '../session.ts';
import { errorText, field, h, notice } from '../ui.ts';

export function renderSignIn(main: HTMLElement, onSignedIn: () => Promise<void>): void {
  const input = h('input', { type: 'password', name: 'token', autocomplete: 'off', spellcheck: 'false', required: true, class: 'wide' });
  const status = h('div', { 'aria-live': 'polite' });
  const form = h(
    'form',
    { class: 'card signin-card', 'aria-labelledby': 'signin-title' },
    h('h1', { id: 'signin-title' }, h('span', { class: 'brand-mark', 'aria-hidden': 'true' }, '◠'), ' earshot'),
    h('p', { class: 'lede' }, 'Plan sub-GHz sensor fleets on real terrain: where gateways go, which kit each node needs, and proof that every sensor is heard with margin.'),
    h('h2', {}, 'Sign in'),
    h(
      'p',
      {},
      'Open the sign-in link a planner of your team sent you (or scan its QR code with your phone), or paste the link or an API token here.',
    ),
    field('API token or sign-in link', input, 'The first planner uses the link the server printed at start-up; admins: earshot token issue --team <slug> --role <role> --link'),
    h('button', { type: 'submit', class: 'primary' }, 'Sign in'),
    status,
  );
  form.addEventListener('submit', (event) => {
    event.preventDefault();
    void (async () => {
      status.replaceChildren();
      const raw = input.value.trim();
      if (!raw) {
        status.append(notice('error', 'Paste a token or a sign-in link first.'));
        return;
      }
      // A pasted sign-in link or a bare token: either way the token goes to the server in the
      // request body and comes back as the session cookie (no token in a URL or in the tab).
      const linkMatch = /[?&]token=([^&#\s]+)/.exec(raw);
      const token = linkMatch ? decodeURIComponent(linkMatch[1]) : raw;
      try {
        await signInWithToken(token);
        const s = await refreshSession();
        if (!s.signedIn) {
          status.append(notice('error', 'Signed in, but the server did not keep the session. Are cookies blocked for this site?'));
          return;
        }
        await onSignedIn();
      } catch (err) {
        const message = err instanceof ApiError && err.status === 401 ? 'this token or link is unknown, revoked, expired or already used. Ask a planner of your team for a new invitation.' : err instanceof ApiError ? `${err.message} (${err.code})` : errorText(err);
        status.append(notice('error', `Sign-in failed: ${message}`));
      }
    })();
  });
  main.append(form);
  input.focus();
}
