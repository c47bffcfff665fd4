-- The rollup journal's statement deletes the entries of the rows it rolls up and adds their sums.
-- If it finds fewer entries than it was given (another process rolled some up, or a row was never
-- listed), it must add nothing: raising here undoes the whole statement, and the journal then
-- reads the gateway's listed rows back from the database instead.
CREATE FUNCTION rollup_journal_check(listed bigint, expected bigint) RETURNS int LANGUAGE plpgsql AS $$
BEGIN
  IF listed <> expected THEN
    RAISE EXCEPTION 'rollup journal: % of % entries still listed', listed, expected;
  END IF;
  RETURN 1;
END
$$;
