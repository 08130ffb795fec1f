-- Fleet link table runs split into tiles over the queue (issue 20): parent and children, state in the database.
CREATE TABLE "LinkRun" (
    "id" TEXT NOT NULL,
    "planId" TEXT NOT NULL,
    "kind" TEXT NOT NULL DEFAULT 'fleet-links',
    "params" JSONB NOT NULL DEFAULT '{}',
    "status" "RunStatus" NOT NULL DEFAULT 'queued',
    "error" TEXT,
    "tilesTotal" INTEGER NOT NULL DEFAULT 0,
    "pairsTotal" INTEGER NOT NULL DEFAULT 0,
    "createdById" TEXT,
    "createdAt" TIMESTAMP(3) NOT NULL DEFAULT CURRENT_TIMESTAMP,
    "startedAt" TIMESTAMP(3),
    "finishedAt" TIMESTAMP(3),
    CONSTRAINT "LinkRun_pkey" PRIMARY KEY ("id")
);

CREATE TABLE "LinkRunTile" (
    "id" TEXT NOT NULL,
    "runId" TEXT NOT NULL,
    "index" INTEGER NOT NULL,
    "nodeIds" JSONB NOT NULL DEFAULT '[]',
    "gatewayIds" JSONB NOT NULL DEFAULT '[]',
    "pairs" INTEGER NOT NULL DEFAULT 0,
    "status" "RunStatus" NOT NULL DEFAULT 'queued',
    "attempts" INTEGER NOT NULL DEFAULT 0,
    "workerIds" JSONB NOT NULL DEFAULT '[]',
    "doneBy" TEXT,
    "linksWritten" INTEGER NOT NULL DEFAULT 0,
    "seconds" DOUBLE PRECISION NOT NULL DEFAULT 0,
    "writeSeconds" DOUBLE PRECISION NOT NULL DEFAULT 0,
    "result" JSONB,
    "error" TEXT,
    "startedAt" TIMESTAMP(3),
    "finishedAt" TIMESTAMP(3),
    CONSTRAINT "LinkRunTile_pkey" PRIMARY KEY ("id")
);

CREATE INDEX "LinkRun_planId_idx" ON "LinkRun"("planId");
CREATE INDEX "LinkRun_status_idx" ON "LinkRun"("status");
CREATE UNIQUE INDEX "LinkRunTile_runId_index_key" ON "LinkRunTile"("runId", "index");
CREATE INDEX "LinkRunTile_runId_status_idx" ON "LinkRunTile"("runId", "status");

ALTER TABLE "LinkRun" ADD CONSTRAINT "LinkRun_planId_fkey" FOREIGN KEY ("planId") REFERENCES "Plan"("id") ON DELETE CASCADE ON UPDATE CASCADE;
ALTER TABLE "LinkRunTile" ADD CONSTRAINT "LinkRunTile_runId_fkey" FOREIGN KEY ("runId") REFERENCES "LinkRun"("id") ON DELETE CASCADE ON UPDATE CASCADE;
