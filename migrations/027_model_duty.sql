-- A motor model's reference duty (the median mean rpm and mean thrust over
-- every logged run of motors with the part number), against which the
-- relative bearing mode weighs each motor. It is a fleet-wide median: read
-- live it joins every run of the model in the fleet, on every ingest. The
-- fleet recompute stores it here; a refresh after an ingest reads it when
-- it is recent enough (health.Settings.DutyMaxAge) and otherwise reads it
-- live and stores it. Nothing else rests on it; it can be dropped and is
-- rebuilt on first need.
CREATE TABLE model_duty (
    part_number  text PRIMARY KEY,
    rpm          double precision NOT NULL,
    thrust_n     double precision NOT NULL,
    computed_at  timestamptz NOT NULL
);
