-- An alarm event outlives its rule: it keeps the rule's name and metric, and deleting the rule
-- empties its rule_id instead of deleting the lab's alarm history with it. Generated, then the two
-- columns are added without NOT NULL, filled from each event's rule, and only then required, since
-- existing events have no value for them.
ALTER TABLE "alarm_events" DROP CONSTRAINT "alarm_events_rule_id_alarm_rules_id_fk";
--> statement-breakpoint
ALTER TABLE "alarm_events" ALTER COLUMN "rule_id" DROP NOT NULL;--> statement-breakpoint
ALTER TABLE "alarm_events" ADD COLUMN "rule_name" text;--> statement-breakpoint
ALTER TABLE "alarm_events" ADD COLUMN "metric" "alarm_metric";--> statement-breakpoint
UPDATE "alarm_events" SET "rule_name" = "alarm_rules"."name", "metric" = "alarm_rules"."metric" FROM "alarm_rules" WHERE "alarm_rules"."id" = "alarm_events"."rule_id";--> statement-breakpoint
ALTER TABLE "alarm_events" ALTER COLUMN "rule_name" SET NOT NULL;--> statement-breakpoint
ALTER TABLE "alarm_events" ALTER COLUMN "metric" SET NOT NULL;--> statement-breakpoint
ALTER TABLE "alarm_events" ADD CONSTRAINT "alarm_events_rule_id_alarm_rules_id_fk" FOREIGN KEY ("rule_id") REFERENCES "public"."alarm_rules"("id") ON DELETE set null ON UPDATE no action;
