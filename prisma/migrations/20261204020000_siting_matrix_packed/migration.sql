-- A siting run's matrix cells move out of the JSON column into two byte columns
-- (packed "meets" bits and Int32 centi-dB margins): 1.6 MB instead of 3–4 MB of JSON
-- at 2,000 nodes × 200 candidates. Runs stored before keep their JSON matrix and stay readable.
-- AlterTable
ALTER TABLE "SitingRun" ADD COLUMN "matrixMeets" BYTEA,
ADD COLUMN "matrixMarginCdB" BYTEA;

-- keepExistingGateways false: apply replaces the plan's gateways; the removed ones are kept
-- here (rows + the field readings that named them) so undo can restore them.
ALTER TABLE "SitingRun" ADD COLUMN "removedGateways" JSONB,
ADD COLUMN "undoneAt" TIMESTAMP(3);
