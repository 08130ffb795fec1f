-- Link rows without foreign keys or a surrogate id (issue 20). A fleet link run writes one
-- row per node–gateway pair within range (194 299 in the scale bench), and the three foreign
-- keys (a key-share lock and an index probe on Plan, Node and Gateway for every row) plus a
-- random UUID primary key were most of PostgreSQL's CPU per row: measured with psql on 40 000
-- rows of this shape, 2.4–3.1 s as before against 0.5–0.75 s as below (one run, alternating).
-- The key is now the pair within its plan; nothing ever read the id. The write keeps the
-- rule the foreign keys enforced by joining each row to its node and gateway in the plan
-- (server/db/repositories/links.ts upsertLinkRows: a row of a node or gateway that is gone is
-- not written), and the cascades become the statement triggers below.
ALTER TABLE "Link" DROP CONSTRAINT "Link_planId_fkey";
ALTER TABLE "Link" DROP CONSTRAINT "Link_nodeId_fkey";
ALTER TABLE "Link" DROP CONSTRAINT "Link_gatewayId_fkey";
ALTER TABLE "Link" DROP CONSTRAINT "Link_pkey";
ALTER TABLE "Link" DROP COLUMN "id";
DROP INDEX "Link_nodeId_gatewayId_key";
DROP INDEX "Link_planId_idx";
ALTER TABLE "Link" ADD CONSTRAINT "Link_pkey" PRIMARY KEY ("planId", "nodeId", "gatewayId");

-- Deleting nodes, gateways or plans (directly or by a cascade from their plan) deletes their
-- cached links, once per statement over the deleted rows.
CREATE OR REPLACE FUNCTION "earshot_drop_links"() RETURNS trigger LANGUAGE plpgsql AS $$
BEGIN
  IF TG_TABLE_NAME = 'Plan' THEN
    DELETE FROM "Link" l USING deleted d WHERE l."planId" = d."id";
  ELSIF TG_TABLE_NAME = 'Node' THEN
    DELETE FROM "Link" l USING deleted d WHERE l."planId" = d."planId" AND l."nodeId" = d."id";
  ELSE
    DELETE FROM "Link" l USING deleted d WHERE l."planId" = d."planId" AND l."gatewayId" = d."id";
  END IF;
  RETURN NULL;
END
$$;
CREATE TRIGGER "Node_drop_links" AFTER DELETE ON "Node" REFERENCING OLD TABLE AS deleted FOR EACH STATEMENT EXECUTE FUNCTION "earshot_drop_links"();
CREATE TRIGGER "Gateway_drop_links" AFTER DELETE ON "Gateway" REFERENCING OLD TABLE AS deleted FOR EACH STATEMENT EXECUTE FUNCTION "earshot_drop_links"();
CREATE TRIGGER "Plan_drop_links" AFTER DELETE ON "Plan" REFERENCING OLD TABLE AS deleted FOR EACH STATEMENT EXECUTE FUNCTION "earshot_drop_links"();
