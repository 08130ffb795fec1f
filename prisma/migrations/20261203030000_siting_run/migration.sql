-- Gateway siting runs (issue 13): state in the database like coverage runs.
CREATE TABLE "SitingRun" (
    "id" TEXT NOT NULL,
    "planId" TEXT NOT NULL,
    "params" JSONB NOT NULL DEFAULT '{}',
    "status" "RunStatus" NOT NULL DEFAULT 'queued',
    "progress" DOUBLE PRECISION NOT NULL DEFAULT 0,
    "error" TEXT,
    "planFingerprint" TEXT NOT NULL,
    "matrixHash" TEXT,
    "matrix" JSONB,
    "result" JSONB,
    "appliedAt" TIMESTAMP(3),
    "appliedGatewayIds" JSONB,
    "createdById" TEXT,
    "createdAt" TIMESTAMP(3) NOT NULL DEFAULT CURRENT_TIMESTAMP,
    "startedAt" TIMESTAMP(3),
    "finishedAt" TIMESTAMP(3),
    CONSTRAINT "SitingRun_pkey" PRIMARY KEY ("id")
);

CREATE INDEX "SitingRun_planId_idx" ON "SitingRun"("planId");
CREATE INDEX "SitingRun_status_idx" ON "SitingRun"("status");
CREATE INDEX "SitingRun_matrixHash_idx" ON "SitingRun"("matrixHash");

ALTER TABLE "SitingRun" ADD CONSTRAINT "SitingRun_planId_fkey" FOREIGN KEY ("planId") REFERENCES "Plan"("id") ON DELETE CASCADE ON UPDATE CASCADE;
