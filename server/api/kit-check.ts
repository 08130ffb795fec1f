// Kit references in request bodies must name a catalog row the team can see.
import type { Database } from '../db/client.ts';
import { findAntennaDesignRow, findFeedlineRow, findMastRow } from '../db/repositories/kit.ts';
import { ApiError } from './errors.ts';

export async function assertKitVisible(
  db: Database,
  teamId: string,
  refs: { antennaDesignId?: string | null; feedlineId?: string | null; mastOptionId?: string | null },
): Promise<void> {
  if (refs.antennaDesignId && !(await findAntennaDesignRow(db, teamId, refs.antennaDesignId))) {
    throw new ApiError(400, 'invalid_input', `antennaDesignId: no antenna design "${refs.antennaDesignId}" in the kit catalog`);
  }
  if (refs.feedlineId && !(await findFeedlineRow(db, teamId, refs.feedlineId))) {
    throw new ApiError(400, 'invalid_input', `feedlineId: no feedline "${refs.feedlineId}" in the kit catalog`);
  }
  if (refs.mastOptionId && !(await findMastRow(db, teamId, refs.mastOptionId))) {
    throw new ApiError(400, 'invalid_input', `mastOptionId: no mast option "${refs.mastOptionId}" in the kit catalog`);
  }
}
