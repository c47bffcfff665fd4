-- Count arrays become packed bytea (src/lib/server/db/packed-counts.ts): a width byte w (1, 2 or
-- 4), then each count as a big-endian unsigned integer of w bytes. Two SQL functions keep the data
-- readable from psql and let rows stored before be converted in place (at width 4), in one rewrite.
CREATE FUNCTION pack_counts(a int4[]) RETURNS bytea LANGUAGE plpgsql IMMUTABLE STRICT PARALLEL SAFE AS $$
BEGIN
  -- string_agg would skip a NULL and shift every later count into the wrong bin.
  IF array_position(a, NULL) IS NOT NULL THEN
    RAISE EXCEPTION 'pack_counts: a count is NULL';
  END IF;
  RETURN '\x04'::bytea || coalesce((SELECT string_agg(int4send(v), ''::bytea ORDER BY i) FROM unnest(a) WITH ORDINALITY AS u(v, i)), ''::bytea);
END $$;--> statement-breakpoint
CREATE FUNCTION unpack_counts(p bytea) RETURNS int4[] LANGUAGE plpgsql IMMUTABLE STRICT PARALLEL SAFE AS $$
DECLARE
  w int := get_byte(p, 0);
BEGIN
  IF w NOT IN (1, 2, 4) OR (length(p) - 1) % w <> 0 THEN
    RAISE EXCEPTION 'unpack_counts: malformed packed counts';
  END IF;
  RETURN (SELECT coalesce(array_agg(CASE w
            WHEN 1 THEN get_byte(p, 1 + i)
            WHEN 2 THEN (get_byte(p, 1 + 2 * i) << 8) | get_byte(p, 2 + 2 * i)
            ELSE (get_byte(p, 1 + 4 * i) << 24) | (get_byte(p, 2 + 4 * i) << 16) | (get_byte(p, 3 + 4 * i) << 8) | get_byte(p, 4 + 4 * i)
          END ORDER BY i), '{}')
          FROM generate_series(0, (length(p) - 1) / w - 1) AS i);
END $$;--> statement-breakpoint
ALTER TABLE "count_batches"
  ALTER COLUMN "counts" SET DATA TYPE bytea USING pack_counts("counts"),
  ALTER COLUMN "cc" SET DATA TYPE bytea USING pack_counts("cc");
