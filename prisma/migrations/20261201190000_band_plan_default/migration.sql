-- Plans default to the band plan id server/radio/band-plans.ts uses for US 902-928 MHz.
-- AlterTable
ALTER TABLE "Plan" ALTER COLUMN "bandPlanId" SET DEFAULT 'us-902-928';
