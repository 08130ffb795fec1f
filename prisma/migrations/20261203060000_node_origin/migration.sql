-- A copied plan's nodes remember the node they were copied from (the first one of a
-- chain of copies), so two scenarios of one team compare node by node.
-- AlterTable
ALTER TABLE "Node" ADD COLUMN "originId" TEXT;
