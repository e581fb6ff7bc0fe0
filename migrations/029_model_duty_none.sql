-- A motor model whose logged runs give no duty yet (none carries both a
-- mean rpm and a thrust, e.g. a fleet that never states take-off mass) is
-- stored too, as NULLs, so that a refresh does not join every run of the
-- model on each ingest to find that again (migration 027 stored only
-- models with a duty).
ALTER TABLE model_duty ALTER COLUMN rpm DROP NOT NULL, ALTER COLUMN thrust_n DROP NOT NULL;
ALTER TABLE model_duty ADD CONSTRAINT model_duty_both CHECK ((rpm IS NULL) = (thrust_n IS NULL));
