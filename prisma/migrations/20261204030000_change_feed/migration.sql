-- Change feed: every committed change to a table that answers are built from sends one
-- notification on the channel "earshot_change" (payload: the table name). PostgreSQL
-- delivers NOTIFY at COMMIT only (a rolled-back write says nothing) and folds repeated
-- payloads of one transaction into one. Each process LISTENs (server/db/change-feed.ts) and
-- drops its in-memory read memos when one arrives, on PGlite and on PostgreSQL alike.
CREATE OR REPLACE FUNCTION "earshot_notify_change"() RETURNS trigger LANGUAGE plpgsql AS $$
BEGIN
  PERFORM pg_notify('earshot_change', TG_TABLE_NAME);
  RETURN NULL;
END
$$;

CREATE TRIGGER "Team_change_notify" AFTER INSERT OR UPDATE OR DELETE OR TRUNCATE ON "Team" FOR EACH STATEMENT EXECUTE FUNCTION "earshot_notify_change"();
CREATE TRIGGER "User_change_notify" AFTER INSERT OR UPDATE OR DELETE OR TRUNCATE ON "User" FOR EACH STATEMENT EXECUTE FUNCTION "earshot_notify_change"();
CREATE TRIGGER "Plan_change_notify" AFTER INSERT OR UPDATE OR DELETE OR TRUNCATE ON "Plan" FOR EACH STATEMENT EXECUTE FUNCTION "earshot_notify_change"();
CREATE TRIGGER "Site_change_notify" AFTER INSERT OR UPDATE OR DELETE OR TRUNCATE ON "Site" FOR EACH STATEMENT EXECUTE FUNCTION "earshot_notify_change"();
CREATE TRIGGER "Gateway_change_notify" AFTER INSERT OR UPDATE OR DELETE OR TRUNCATE ON "Gateway" FOR EACH STATEMENT EXECUTE FUNCTION "earshot_notify_change"();
CREATE TRIGGER "Node_change_notify" AFTER INSERT OR UPDATE OR DELETE OR TRUNCATE ON "Node" FOR EACH STATEMENT EXECUTE FUNCTION "earshot_notify_change"();
CREATE TRIGGER "AntennaDesign_change_notify" AFTER INSERT OR UPDATE OR DELETE OR TRUNCATE ON "AntennaDesign" FOR EACH STATEMENT EXECUTE FUNCTION "earshot_notify_change"();
CREATE TRIGGER "FeedlineType_change_notify" AFTER INSERT OR UPDATE OR DELETE OR TRUNCATE ON "FeedlineType" FOR EACH STATEMENT EXECUTE FUNCTION "earshot_notify_change"();
CREATE TRIGGER "MastOption_change_notify" AFTER INSERT OR UPDATE OR DELETE OR TRUNCATE ON "MastOption" FOR EACH STATEMENT EXECUTE FUNCTION "earshot_notify_change"();
CREATE TRIGGER "TerrainLayer_change_notify" AFTER INSERT OR UPDATE OR DELETE OR TRUNCATE ON "TerrainLayer" FOR EACH STATEMENT EXECUTE FUNCTION "earshot_notify_change"();
CREATE TRIGGER "Calibration_change_notify" AFTER INSERT OR UPDATE OR DELETE OR TRUNCATE ON "Calibration" FOR EACH STATEMENT EXECUTE FUNCTION "earshot_notify_change"();
CREATE TRIGGER "AppliedCalibration_change_notify" AFTER INSERT OR UPDATE OR DELETE OR TRUNCATE ON "AppliedCalibration" FOR EACH STATEMENT EXECUTE FUNCTION "earshot_notify_change"();
