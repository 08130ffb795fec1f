-- earshot initial schema (written to match prisma/schema.prisma; checked by
-- test/unit/db/schema-agreement.test.ts). Applied by server/db/migrate.ts.

-- CreateEnum
CREATE TYPE "UserRole" AS ENUM ('planner', 'installer', 'viewer');
CREATE TYPE "SiteKind" AS ENUM ('candidate', 'used');
CREATE TYPE "SfPolicy" AS ENUM ('adaptive', 'fixed');
CREATE TYPE "NodeEnvironment" AS ENUM ('outdoor', 'indoor', 'pit');
CREATE TYPE "InstallStatus" AS ENUM ('planned', 'installed', 'needs-visit');
CREATE TYPE "TerrainKind" AS ENUM ('elevation', 'clutter');
CREATE TYPE "RunStatus" AS ENUM ('queued', 'running', 'done', 'failed', 'cancelled');

-- CreateTable
CREATE TABLE "Team" (
    "id" TEXT NOT NULL,
    "slug" TEXT NOT NULL,
    "name" TEXT NOT NULL,
    "createdAt" TIMESTAMP(3) NOT NULL DEFAULT CURRENT_TIMESTAMP,
    CONSTRAINT "Team_pkey" PRIMARY KEY ("id")
);

CREATE TABLE "User" (
    "id" TEXT NOT NULL,
    "teamId" TEXT NOT NULL,
    "name" TEXT NOT NULL,
    "email" TEXT,
    "role" "UserRole" NOT NULL,
    "createdAt" TIMESTAMP(3) NOT NULL DEFAULT CURRENT_TIMESTAMP,
    CONSTRAINT "User_pkey" PRIMARY KEY ("id")
);

CREATE TABLE "ApiToken" (
    "id" TEXT NOT NULL,
    "teamId" TEXT NOT NULL,
    "userId" TEXT NOT NULL,
    "lookupId" TEXT NOT NULL,
    "hash" TEXT NOT NULL,
    "label" TEXT NOT NULL DEFAULT '',
    "oneTime" BOOLEAN NOT NULL DEFAULT false,
    "expiresAt" TIMESTAMP(3),
    "revokedAt" TIMESTAMP(3),
    "lastUsedAt" TIMESTAMP(3),
    "createdAt" TIMESTAMP(3) NOT NULL DEFAULT CURRENT_TIMESTAMP,
    CONSTRAINT "ApiToken_pkey" PRIMARY KEY ("id")
);

CREATE TABLE "Plan" (
    "id" TEXT NOT NULL,
    "teamId" TEXT NOT NULL,
    "name" TEXT NOT NULL,
    "description" TEXT NOT NULL DEFAULT '',
    "bandPlanId" TEXT NOT NULL DEFAULT 'us902',
    "targetMarginDb" DOUBLE PRECISION NOT NULL DEFAULT 10,
    "locationSigmaDb" DOUBLE PRECISION,
    "propagationMethod" TEXT NOT NULL DEFAULT 'p1812',
    "settings" JSONB NOT NULL DEFAULT '{}',
    "version" INTEGER NOT NULL DEFAULT 1,
    "createdAt" TIMESTAMP(3) NOT NULL DEFAULT CURRENT_TIMESTAMP,
    "updatedAt" TIMESTAMP(3) NOT NULL,
    CONSTRAINT "Plan_pkey" PRIMARY KEY ("id")
);

CREATE TABLE "Site" (
    "id" TEXT NOT NULL,
    "planId" TEXT NOT NULL,
    "name" TEXT NOT NULL,
    "lat" DOUBLE PRECISION NOT NULL,
    "lon" DOUBLE PRECISION NOT NULL,
    "groundM" DOUBLE PRECISION,
    "kind" "SiteKind" NOT NULL DEFAULT 'candidate',
    "notes" TEXT NOT NULL DEFAULT '',
    "costUsd" DOUBLE PRECISION,
    "maxAntennaHeightAglM" DOUBLE PRECISION,
    "version" INTEGER NOT NULL DEFAULT 1,
    "createdAt" TIMESTAMP(3) NOT NULL DEFAULT CURRENT_TIMESTAMP,
    "updatedAt" TIMESTAMP(3) NOT NULL,
    CONSTRAINT "Site_pkey" PRIMARY KEY ("id")
);

CREATE TABLE "Gateway" (
    "id" TEXT NOT NULL,
    "planId" TEXT NOT NULL,
    "siteId" TEXT,
    "name" TEXT NOT NULL,
    "lat" DOUBLE PRECISION NOT NULL,
    "lon" DOUBLE PRECISION NOT NULL,
    "antennaDesignId" TEXT NOT NULL,
    "antennaHeightAglM" DOUBLE PRECISION NOT NULL,
    "feedlineId" TEXT NOT NULL,
    "feedlineLengthM" DOUBLE PRECISION NOT NULL DEFAULT 0,
    "mastOptionId" TEXT,
    "noiseFigureDb" DOUBLE PRECISION NOT NULL DEFAULT 6,
    "txPowerDbm" DOUBLE PRECISION NOT NULL DEFAULT 27,
    "notes" TEXT NOT NULL DEFAULT '',
    "version" INTEGER NOT NULL DEFAULT 1,
    "createdAt" TIMESTAMP(3) NOT NULL DEFAULT CURRENT_TIMESTAMP,
    "updatedAt" TIMESTAMP(3) NOT NULL,
    CONSTRAINT "Gateway_pkey" PRIMARY KEY ("id")
);

CREATE TABLE "Node" (
    "id" TEXT NOT NULL,
    "planId" TEXT NOT NULL,
    "name" TEXT NOT NULL,
    "lat" DOUBLE PRECISION NOT NULL,
    "lon" DOUBLE PRECISION NOT NULL,
    "deviceType" TEXT NOT NULL,
    "antennaDesignId" TEXT NOT NULL,
    "antennaHeightAglM" DOUBLE PRECISION NOT NULL,
    "feedlineId" TEXT,
    "feedlineLengthM" DOUBLE PRECISION NOT NULL DEFAULT 0,
    "mastOptionId" TEXT,
    "txPowerDbm" DOUBLE PRECISION NOT NULL DEFAULT 14,
    "sfPolicy" "SfPolicy" NOT NULL DEFAULT 'adaptive',
    "fixedSf" INTEGER,
    "payloadBytes" INTEGER NOT NULL DEFAULT 12,
    "messagesPerHour" DOUBLE PRECISION NOT NULL DEFAULT 1,
    "environment" "NodeEnvironment" NOT NULL DEFAULT 'outdoor',
    "buildingType" TEXT,
    "installStatus" "InstallStatus" NOT NULL DEFAULT 'planned',
    "notes" TEXT NOT NULL DEFAULT '',
    "version" INTEGER NOT NULL DEFAULT 1,
    "createdAt" TIMESTAMP(3) NOT NULL DEFAULT CURRENT_TIMESTAMP,
    "updatedAt" TIMESTAMP(3) NOT NULL,
    CONSTRAINT "Node_pkey" PRIMARY KEY ("id")
);

CREATE TABLE "AntennaDesign" (
    "id" TEXT NOT NULL,
    "teamId" TEXT,
    "name" TEXT NOT NULL,
    "kind" TEXT NOT NULL,
    "gainDbi" DOUBLE PRECISION NOT NULL,
    "pattern" JSONB NOT NULL DEFAULT '{}',
    "polarization" TEXT NOT NULL DEFAULT 'vertical',
    "fromMhz" DOUBLE PRECISION NOT NULL,
    "toMhz" DOUBLE PRECISION NOT NULL,
    "typicalVswr" DOUBLE PRECISION NOT NULL DEFAULT 1.5,
    "costUsd" DOUBLE PRECISION NOT NULL DEFAULT 0,
    "homemade" BOOLEAN NOT NULL DEFAULT false,
    "buildSheetId" TEXT,
    "notes" TEXT NOT NULL DEFAULT '',
    "version" INTEGER NOT NULL DEFAULT 1,
    "createdAt" TIMESTAMP(3) NOT NULL DEFAULT CURRENT_TIMESTAMP,
    "updatedAt" TIMESTAMP(3) NOT NULL,
    CONSTRAINT "AntennaDesign_pkey" PRIMARY KEY ("id")
);

CREATE TABLE "FeedlineType" (
    "id" TEXT NOT NULL,
    "teamId" TEXT,
    "name" TEXT NOT NULL,
    "lossDbPer100m" DOUBLE PRECISION NOT NULL,
    "referenceMhz" DOUBLE PRECISION NOT NULL,
    "lossTable" JSONB NOT NULL DEFAULT '[]',
    "connectorLossDb" DOUBLE PRECISION NOT NULL DEFAULT 0,
    "impedanceOhm" DOUBLE PRECISION NOT NULL DEFAULT 50,
    "velocityFactor" DOUBLE PRECISION,
    "costUsdPerM" DOUBLE PRECISION NOT NULL DEFAULT 0,
    "notes" TEXT NOT NULL DEFAULT '',
    "version" INTEGER NOT NULL DEFAULT 1,
    "createdAt" TIMESTAMP(3) NOT NULL DEFAULT CURRENT_TIMESTAMP,
    "updatedAt" TIMESTAMP(3) NOT NULL,
    CONSTRAINT "FeedlineType_pkey" PRIMARY KEY ("id")
);

CREATE TABLE "MastOption" (
    "id" TEXT NOT NULL,
    "teamId" TEXT,
    "name" TEXT NOT NULL,
    "heightM" DOUBLE PRECISION NOT NULL,
    "costUsd" DOUBLE PRECISION NOT NULL DEFAULT 0,
    "details" JSONB NOT NULL DEFAULT '{}',
    "notes" TEXT NOT NULL DEFAULT '',
    "version" INTEGER NOT NULL DEFAULT 1,
    "createdAt" TIMESTAMP(3) NOT NULL DEFAULT CURRENT_TIMESTAMP,
    "updatedAt" TIMESTAMP(3) NOT NULL,
    CONSTRAINT "MastOption_pkey" PRIMARY KEY ("id")
);

CREATE TABLE "TerrainLayer" (
    "id" TEXT NOT NULL,
    "planId" TEXT NOT NULL,
    "kind" "TerrainKind" NOT NULL,
    "name" TEXT NOT NULL,
    "filePath" TEXT NOT NULL,
    "fileBytes" BIGINT NOT NULL,
    "sha256" TEXT,
    "widthPx" INTEGER NOT NULL,
    "heightPx" INTEGER NOT NULL,
    "epsg" INTEGER,
    "proj4" TEXT NOT NULL,
    "geoTransform" JSONB NOT NULL,
    "west" DOUBLE PRECISION NOT NULL,
    "south" DOUBLE PRECISION NOT NULL,
    "east" DOUBLE PRECISION NOT NULL,
    "north" DOUBLE PRECISION NOT NULL,
    "resolutionM" DOUBLE PRECISION NOT NULL,
    "noData" DOUBLE PRECISION,
    "priority" INTEGER NOT NULL DEFAULT 0,
    "createdById" TEXT,
    "createdAt" TIMESTAMP(3) NOT NULL DEFAULT CURRENT_TIMESTAMP,
    CONSTRAINT "TerrainLayer_pkey" PRIMARY KEY ("id")
);

CREATE TABLE "Link" (
    "id" TEXT NOT NULL,
    "planId" TEXT NOT NULL,
    "nodeId" TEXT NOT NULL,
    "gatewayId" TEXT NOT NULL,
    "inputHash" TEXT NOT NULL,
    "result" JSONB NOT NULL,
    "computedAt" TIMESTAMP(3) NOT NULL DEFAULT CURRENT_TIMESTAMP,
    CONSTRAINT "Link_pkey" PRIMARY KEY ("id")
);

CREATE TABLE "CoverageRun" (
    "id" TEXT NOT NULL,
    "planId" TEXT NOT NULL,
    "kind" TEXT NOT NULL DEFAULT 'coverage',
    "gatewayIds" JSONB NOT NULL DEFAULT '[]',
    "params" JSONB NOT NULL DEFAULT '{}',
    "status" "RunStatus" NOT NULL DEFAULT 'queued',
    "progress" DOUBLE PRECISION NOT NULL DEFAULT 0,
    "error" TEXT,
    "attempts" INTEGER NOT NULL DEFAULT 0,
    "resultPath" TEXT,
    "summary" JSONB,
    "lockedBy" TEXT,
    "lockedAt" TIMESTAMP(3),
    "createdById" TEXT,
    "createdAt" TIMESTAMP(3) NOT NULL DEFAULT CURRENT_TIMESTAMP,
    "startedAt" TIMESTAMP(3),
    "finishedAt" TIMESTAMP(3),
    CONSTRAINT "CoverageRun_pkey" PRIMARY KEY ("id")
);

CREATE TABLE "FieldReading" (
    "id" TEXT NOT NULL,
    "planId" TEXT NOT NULL,
    "nodeId" TEXT NOT NULL,
    "gatewayId" TEXT,
    "rssiDbm" DOUBLE PRECISION NOT NULL,
    "snrDb" DOUBLE PRECISION NOT NULL,
    "sf" INTEGER NOT NULL,
    "measuredAt" TIMESTAMP(3) NOT NULL,
    "lat" DOUBLE PRECISION,
    "lon" DOUBLE PRECISION,
    "note" TEXT NOT NULL DEFAULT '',
    "createdById" TEXT,
    "createdAt" TIMESTAMP(3) NOT NULL DEFAULT CURRENT_TIMESTAMP,
    CONSTRAINT "FieldReading_pkey" PRIMARY KEY ("id")
);

CREATE TABLE "AuditEntry" (
    "id" TEXT NOT NULL,
    "teamId" TEXT NOT NULL,
    "userId" TEXT,
    "tokenId" TEXT,
    "action" TEXT NOT NULL,
    "entity" TEXT NOT NULL,
    "entityId" TEXT NOT NULL,
    "detail" JSONB NOT NULL DEFAULT '{}',
    "at" TIMESTAMP(3) NOT NULL DEFAULT CURRENT_TIMESTAMP,
    CONSTRAINT "AuditEntry_pkey" PRIMARY KEY ("id")
);

-- CreateIndex
CREATE UNIQUE INDEX "Team_slug_key" ON "Team"("slug");
CREATE INDEX "User_teamId_idx" ON "User"("teamId");
CREATE UNIQUE INDEX "ApiToken_lookupId_key" ON "ApiToken"("lookupId");
CREATE INDEX "ApiToken_teamId_idx" ON "ApiToken"("teamId");
CREATE INDEX "ApiToken_userId_idx" ON "ApiToken"("userId");
CREATE INDEX "Plan_teamId_idx" ON "Plan"("teamId");
CREATE INDEX "Site_planId_idx" ON "Site"("planId");
CREATE INDEX "Gateway_planId_idx" ON "Gateway"("planId");
CREATE INDEX "Gateway_siteId_idx" ON "Gateway"("siteId");
CREATE INDEX "Node_planId_idx" ON "Node"("planId");
CREATE INDEX "AntennaDesign_teamId_idx" ON "AntennaDesign"("teamId");
CREATE INDEX "FeedlineType_teamId_idx" ON "FeedlineType"("teamId");
CREATE INDEX "MastOption_teamId_idx" ON "MastOption"("teamId");
CREATE INDEX "TerrainLayer_planId_idx" ON "TerrainLayer"("planId");
CREATE UNIQUE INDEX "Link_nodeId_gatewayId_key" ON "Link"("nodeId", "gatewayId");
CREATE INDEX "Link_planId_idx" ON "Link"("planId");
CREATE INDEX "Link_gatewayId_idx" ON "Link"("gatewayId");
CREATE INDEX "CoverageRun_planId_idx" ON "CoverageRun"("planId");
CREATE INDEX "CoverageRun_status_idx" ON "CoverageRun"("status");
CREATE INDEX "FieldReading_planId_idx" ON "FieldReading"("planId");
CREATE INDEX "FieldReading_nodeId_idx" ON "FieldReading"("nodeId");
CREATE INDEX "AuditEntry_teamId_at_idx" ON "AuditEntry"("teamId", "at");

-- AddForeignKey
ALTER TABLE "User" ADD CONSTRAINT "User_teamId_fkey" FOREIGN KEY ("teamId") REFERENCES "Team"("id") ON DELETE CASCADE ON UPDATE CASCADE;
ALTER TABLE "ApiToken" ADD CONSTRAINT "ApiToken_teamId_fkey" FOREIGN KEY ("teamId") REFERENCES "Team"("id") ON DELETE CASCADE ON UPDATE CASCADE;
ALTER TABLE "ApiToken" ADD CONSTRAINT "ApiToken_userId_fkey" FOREIGN KEY ("userId") REFERENCES "User"("id") ON DELETE CASCADE ON UPDATE CASCADE;
ALTER TABLE "Plan" ADD CONSTRAINT "Plan_teamId_fkey" FOREIGN KEY ("teamId") REFERENCES "Team"("id") ON DELETE CASCADE ON UPDATE CASCADE;
ALTER TABLE "Site" ADD CONSTRAINT "Site_planId_fkey" FOREIGN KEY ("planId") REFERENCES "Plan"("id") ON DELETE CASCADE ON UPDATE CASCADE;
ALTER TABLE "Gateway" ADD CONSTRAINT "Gateway_planId_fkey" FOREIGN KEY ("planId") REFERENCES "Plan"("id") ON DELETE CASCADE ON UPDATE CASCADE;
ALTER TABLE "Gateway" ADD CONSTRAINT "Gateway_siteId_fkey" FOREIGN KEY ("siteId") REFERENCES "Site"("id") ON DELETE SET NULL ON UPDATE CASCADE;
ALTER TABLE "Node" ADD CONSTRAINT "Node_planId_fkey" FOREIGN KEY ("planId") REFERENCES "Plan"("id") ON DELETE CASCADE ON UPDATE CASCADE;
ALTER TABLE "AntennaDesign" ADD CONSTRAINT "AntennaDesign_teamId_fkey" FOREIGN KEY ("teamId") REFERENCES "Team"("id") ON DELETE CASCADE ON UPDATE CASCADE;
ALTER TABLE "FeedlineType" ADD CONSTRAINT "FeedlineType_teamId_fkey" FOREIGN KEY ("teamId") REFERENCES "Team"("id") ON DELETE CASCADE ON UPDATE CASCADE;
ALTER TABLE "MastOption" ADD CONSTRAINT "MastOption_teamId_fkey" FOREIGN KEY ("teamId") REFERENCES "Team"("id") ON DELETE CASCADE ON UPDATE CASCADE;
ALTER TABLE "TerrainLayer" ADD CONSTRAINT "TerrainLayer_planId_fkey" FOREIGN KEY ("planId") REFERENCES "Plan"("id") ON DELETE CASCADE ON UPDATE CASCADE;
ALTER TABLE "Link" ADD CONSTRAINT "Link_planId_fkey" FOREIGN KEY ("planId") REFERENCES "Plan"("id") ON DELETE CASCADE ON UPDATE CASCADE;
ALTER TABLE "Link" ADD CONSTRAINT "Link_nodeId_fkey" FOREIGN KEY ("nodeId") REFERENCES "Node"("id") ON DELETE CASCADE ON UPDATE CASCADE;
ALTER TABLE "Link" ADD CONSTRAINT "Link_gatewayId_fkey" FOREIGN KEY ("gatewayId") REFERENCES "Gateway"("id") ON DELETE CASCADE ON UPDATE CASCADE;
ALTER TABLE "CoverageRun" ADD CONSTRAINT "CoverageRun_planId_fkey" FOREIGN KEY ("planId") REFERENCES "Plan"("id") ON DELETE CASCADE ON UPDATE CASCADE;
ALTER TABLE "FieldReading" ADD CONSTRAINT "FieldReading_planId_fkey" FOREIGN KEY ("planId") REFERENCES "Plan"("id") ON DELETE CASCADE ON UPDATE CASCADE;
ALTER TABLE "FieldReading" ADD CONSTRAINT "FieldReading_nodeId_fkey" FOREIGN KEY ("nodeId") REFERENCES "Node"("id") ON DELETE CASCADE ON UPDATE CASCADE;
ALTER TABLE "FieldReading" ADD CONSTRAINT "FieldReading_gatewayId_fkey" FOREIGN KEY ("gatewayId") REFERENCES "Gateway"("id") ON DELETE SET NULL ON UPDATE CASCADE;
