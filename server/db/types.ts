// The row and value types the rest of the server may name. Only server/db touches the
// Prisma-generated client; other rooms import these names (the lint enforces it).
import type { FieldReading as FieldReadingRow, InstallStatus as InstallStatusValue, Prisma } from './generated/client.ts';

/** A value that may be stored in a JSONB column. */
export type JsonValue = Prisma.InputJsonValue;
/** The database spelling of a node's install status (`needs_visit`; the API says `needs-visit`). */
export type DbInstallStatus = InstallStatusValue;
/** A stored field reading row. */
export type FieldReading = FieldReadingRow;
