-- motor_runs.bins_array (migration 021) is no longer read: the health
-- refresh reads bins_packed (migration 023), the same doubles packed. The
-- column was computed and stored for every run of every upload. Dropping it
-- only marks it gone; its space is reclaimed as rows are rewritten. The
-- function motor_bins_array stays: bins_packed is computed through it.
ALTER TABLE motor_runs DROP COLUMN bins_array;
