-- Sweeps stored before the net visibility's error had its own column still hold it in their fit:
-- a calibrated pass stored the net V's 68% interval as `visibilityInterval`, and its 1σ is that
-- interval's half-width (the profile error by definition; the Fisher interval v ± σ is used only
-- when it lies 3σ inside [0, 1], so it was never clipped). Rows without it stay raw only.
UPDATE "sweeps"
SET "visibility_net_err" = (("fit" #>> '{visibilityInterval,upper}')::double precision - ("fit" #>> '{visibilityInterval,lower}')::double precision) / 2
WHERE "visibility_net" IS NOT NULL
  AND "visibility_net_err" IS NULL
  AND "fit" ->> 'shown' = 'net'
  AND jsonb_typeof("fit" #> '{visibilityInterval,upper}') = 'number'
  AND jsonb_typeof("fit" #> '{visibilityInterval,lower}') = 'number';
