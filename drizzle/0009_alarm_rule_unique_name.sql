-- Rules of one bench may no longer share a name in any letter case (the index below). Older
-- databases can hold such twins: each but the oldest of its group gets the first free " (2)",
-- " (3)", … (free against every name of its bench at that moment, so no rename meets another name),
-- and the rename is written to the audit trail with no person, as the system's own change.
DO $$
DECLARE
  twin record;
  candidate text;
  k integer;
BEGIN
  FOR twin IN
    SELECT id, bench_id, name FROM (
      SELECT id, bench_id, name, row_number() OVER (PARTITION BY bench_id, lower(name) ORDER BY id) AS n FROM alarm_rules
    ) grouped
    WHERE n > 1
    ORDER BY id
  LOOP
    k := 2;
    LOOP
      candidate := left(twin.name, 90) || ' (' || k || ')';
      EXIT WHEN NOT EXISTS (SELECT 1 FROM alarm_rules WHERE bench_id = twin.bench_id AND lower(name) = lower(candidate));
      k := k + 1;
    END LOOP;
    UPDATE alarm_rules SET name = candidate, updated_at = now() WHERE id = twin.id;
    INSERT INTO audit_log (actor_id, entity, entity_id, action, before, after)
    VALUES (NULL, 'alarm_rule', twin.id::text, 'rename_duplicate', jsonb_build_object('name', twin.name), jsonb_build_object('name', candidate));
  END LOOP;
END $$;
--> statement-breakpoint
CREATE UNIQUE INDEX "alarm_rules_bench_name_idx" ON "alarm_rules" USING btree ("bench_id",lower("name"));
