-- Gateways keep where a directional antenna points (degrees clockwise from true north);
-- NULL = omni, or aimed at each node (the link engine's behaviour before this column).
-- AlterTable
ALTER TABLE "Gateway" ADD COLUMN "antennaAzimuthDeg" DOUBLE PRECISION;
