-- Count arrays become packed bytea (src/lib/server/db/packed-counts.ts): a width byte w (1, 2 or
-- 4), then each count as a big-endian unsigned integer of w bytes. Two SQL functions keep the data
-- readable from psql and let rows stored before be converted in place (at width 4).
CREATE FUNCTION pack_counts(a int4[]) RETURNS bytea LANGUAGE sql IMMUTABLE STRICT PARALLEL SAFE AS
  $$ SELECT '\x04'::bytea || coalesce((SELECT string_agg(int4send(v), ''::bytea ORDER BY i) FROM unnest(a) WITH ORDINALITY AS u(v, i)), ''::bytea) $$;--> statement-breakpoint
CREATE FUNCTION unpack_counts(p bytea) RETURNS int4[] LANGUAGE sql IMMUTABLE STRICT PARALLEL SAFE AS
  $$ SELECT coalesce(array_agg(CASE get_byte(p, 0)
       WHEN 1 THEN get_byte(p, 1 + i)
       WHEN 2 THEN (get_byte(p, 1 + 2 * i) << 8) | get_byte(p, 2 + 2 * i)
       ELSE (get_byte(p, 1 + 4 * i) << 24) | (get_byte(p, 2 + 4 * i) << 16) | (get_byte(p, 3 + 4 * i) << 8) | get_byte(p, 4 + 4 * i)
     END ORDER BY i), '{}')
     FROM generate_series(0, (length(p) - 1) / get_byte(p, 0) - 1) AS i $$;--> statement-breakpoint
ALTER TABLE "count_batches" ALTER COLUMN "counts" SET DATA TYPE bytea USING pack_counts("counts");--> statement-breakpoint
ALTER TABLE "count_batches" ALTER COLUMN "cc" SET DATA TYPE bytea USING pack_counts("cc");
