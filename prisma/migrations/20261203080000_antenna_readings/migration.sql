-- Antenna sweeps taken at a node and what the tuning engine made of them (issue 21).
CREATE TABLE "AntennaReading" (
    "id" TEXT NOT NULL,
    "planId" TEXT NOT NULL,
    "nodeId" TEXT NOT NULL,
    "bandId" TEXT NOT NULL,
    "design" TEXT,
    "lengthMm" DOUBLE PRECISION,
    "resonanceMhz" DOUBLE PRECISION NOT NULL,
    "vswrAtResonance" DOUBLE PRECISION NOT NULL,
    "vswrAtBandCentre" DOUBLE PRECISION NOT NULL,
    "returnLossDbAtBandCentre" DOUBLE PRECISION,
    "vswr2LowMhz" DOUBLE PRECISION,
    "vswr2HighMhz" DOUBLE PRECISION,
    "newLengthMm" DOUBLE PRECISION,
    "trimMm" DOUBLE PRECISION,
    "fileName" TEXT NOT NULL DEFAULT '',
    "result" JSONB NOT NULL,
    "note" TEXT NOT NULL DEFAULT '',
    "measuredAt" TIMESTAMP(3) NOT NULL,
    "createdById" TEXT,
    "createdAt" TIMESTAMP(3) NOT NULL DEFAULT CURRENT_TIMESTAMP,
    CONSTRAINT "AntennaReading_pkey" PRIMARY KEY ("id")
);

CREATE INDEX "AntennaReading_planId_idx" ON "AntennaReading"("planId");
CREATE INDEX "AntennaReading_nodeId_idx" ON "AntennaReading"("nodeId");

ALTER TABLE "AntennaReading" ADD CONSTRAINT "AntennaReading_planId_fkey" FOREIGN KEY ("planId") REFERENCES "Plan"("id") ON DELETE CASCADE ON UPDATE CASCADE;
ALTER TABLE "AntennaReading" ADD CONSTRAINT "AntennaReading_nodeId_fkey" FOREIGN KEY ("nodeId") REFERENCES "Node"("id") ON DELETE CASCADE ON UPDATE CASCADE;
