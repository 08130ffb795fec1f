-- Calibration from field readings (issue 15): nodes keep their LoRaWAN DevEUI (how a
-- gateway's uplink log names them), readings keep the kit they were taken with and where
-- they came from, and a plan keeps its calibrations and the one applied.
-- AlterTable
ALTER TABLE "Node" ADD COLUMN "devEui" TEXT;

-- AlterTable
ALTER TABLE "FieldReading" ADD COLUMN "kit" JSONB,
ADD COLUMN "source" TEXT NOT NULL DEFAULT 'manual';

-- CreateTable
CREATE TABLE "Calibration" (
    "id" TEXT NOT NULL,
    "planId" TEXT NOT NULL,
    "createdById" TEXT,
    "createdAt" TIMESTAMP(3) NOT NULL DEFAULT CURRENT_TIMESTAMP,
    "grouping" TEXT NOT NULL DEFAULT 'none',
    "readingIds" JSONB NOT NULL,
    "n" INTEGER NOT NULL,
    "biasDb" DOUBLE PRECISION NOT NULL,
    "sigmaDb" DOUBLE PRECISION NOT NULL,
    "result" JSONB NOT NULL,
    "appliedAt" TIMESTAMP(3),
    "appliedById" TEXT,
    "previousAppliedId" TEXT,
    "revertedAt" TIMESTAMP(3),
    "revertedById" TEXT,

    CONSTRAINT "Calibration_pkey" PRIMARY KEY ("id")
);

-- CreateTable
CREATE TABLE "AppliedCalibration" (
    "planId" TEXT NOT NULL,
    "calibrationId" TEXT NOT NULL,
    "appliedAt" TIMESTAMP(3) NOT NULL DEFAULT CURRENT_TIMESTAMP,
    "appliedById" TEXT,

    CONSTRAINT "AppliedCalibration_pkey" PRIMARY KEY ("planId")
);

-- CreateIndex
CREATE INDEX "Node_planId_devEui_idx" ON "Node"("planId", "devEui");

-- CreateIndex
CREATE INDEX "Calibration_planId_idx" ON "Calibration"("planId");

-- CreateIndex
CREATE UNIQUE INDEX "AppliedCalibration_calibrationId_key" ON "AppliedCalibration"("calibrationId");

-- AddForeignKey
ALTER TABLE "Calibration" ADD CONSTRAINT "Calibration_planId_fkey" FOREIGN KEY ("planId") REFERENCES "Plan"("id") ON DELETE CASCADE ON UPDATE CASCADE;

-- AddForeignKey
ALTER TABLE "AppliedCalibration" ADD CONSTRAINT "AppliedCalibration_planId_fkey" FOREIGN KEY ("planId") REFERENCES "Plan"("id") ON DELETE CASCADE ON UPDATE CASCADE;

-- AddForeignKey
ALTER TABLE "AppliedCalibration" ADD CONSTRAINT "AppliedCalibration_calibrationId_fkey" FOREIGN KEY ("calibrationId") REFERENCES "Calibration"("id") ON DELETE CASCADE ON UPDATE CASCADE;
