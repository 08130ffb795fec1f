-- Slim Link rows (issue 20): the path prediction moves out of the JSON result into a packed
-- byte column (server/planning/path-pack.ts, 220–290 bytes instead of about 1.1 kB of JSON with the summary);
-- the JSON keeps only the path hash. Rows stored before keep their JSON path and stay readable.
ALTER TABLE "Link" ADD COLUMN "packed" BYTEA;

-- A running tile's predicted paths so far: the run's progress counts running tiles too.
ALTER TABLE "LinkRunTile" ADD COLUMN "pairsDone" INTEGER NOT NULL DEFAULT 0;
