-- A motor run's bins once more, packed into bytea: each value of
-- bins_array (migration 021) as a tag byte, 0 for NULL and 1 for a value,
-- then for a value its eight bytes as float8send gives them (big-endian
-- IEEE 754). The refresh after an ingest reads every run of a motor's
-- history; the database sends a bytea as it stores it, where a float8[]
-- goes out element by element through float8send, which cost about as
-- much as the rest of the statement. Kept by the database from bins itself
-- (through motor_bins_array, so the two hold the same doubles).
CREATE FUNCTION motor_bins_packed(bins jsonb) RETURNS bytea
LANGUAGE sql IMMUTABLE STRICT PARALLEL SAFE AS $$
    SELECT coalesce(string_agg(CASE WHEN u.x IS NULL THEN '\x00'::bytea ELSE '\x01'::bytea || float8send(u.x) END,
        ''::bytea ORDER BY u.i), ''::bytea)
    FROM unnest(motor_bins_array(bins)) WITH ORDINALITY AS u (x, i)
$$;

ALTER TABLE motor_runs ADD COLUMN bins_packed bytea NOT NULL
    GENERATED ALWAYS AS (motor_bins_packed(bins)) STORED;
