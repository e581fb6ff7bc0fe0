-- The health model that computed each stored view (health.ModelVersion), so
-- that views computed before an upgrade changed the model are found and
-- recomputed when the service starts, not left until the nightly job.
-- Views stored before this column are of an older model: 0.
ALTER TABLE part_health ADD COLUMN model_version integer NOT NULL DEFAULT 0;
ALTER TABLE airframe_trends ADD COLUMN model_version integer NOT NULL DEFAULT 0;
