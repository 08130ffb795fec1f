-- Kit rows keep the full description server/radio gives them (source, notes, fit...).
-- AlterTable
ALTER TABLE "AntennaDesign" ADD COLUMN "details" JSONB NOT NULL DEFAULT '{}';
ALTER TABLE "FeedlineType" ADD COLUMN "details" JSONB NOT NULL DEFAULT '{}';
