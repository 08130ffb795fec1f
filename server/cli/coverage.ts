// Commands of this room; each is a defineCommand(...) from ./framework.ts.
import type { CliCommand } from './framework.ts';

export const coverageCommands: CliCommand[] = [];
