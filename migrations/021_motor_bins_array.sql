-- A motor run's rpm bins again as a flat float8 array, five values a bin
-- (rpm_lo, rpm_hi, seconds, revolutions, mean_thrust_n; thrust NULL when
-- unknown), kept by the database from bins itself. The health refresh after
-- an ingest reads every run of a motor's history; reading this array in
-- binary costs a fraction of turning jsonb into text and parsing it again.
-- The values are the same doubles: jsonb keeps each number's decimal text,
-- and both this cast (float8in) and the service's JSON decoder round that
-- text correctly. A missing rpm_lo, rpm_hi, seconds or revolutions reads
-- as 0, as the JSON decoder leaves it.
CREATE FUNCTION motor_bins_array(bins jsonb) RETURNS float8[]
LANGUAGE sql IMMUTABLE STRICT PARALLEL SAFE AS $$
    SELECT coalesce(array_agg(k.x ORDER BY e.i, k.j), '{}')
    FROM jsonb_array_elements(bins) WITH ORDINALITY AS e (v, i)
    CROSS JOIN LATERAL (VALUES
        (1, coalesce((e.v ->> 'rpm_lo')::float8, 0)),
        (2, coalesce((e.v ->> 'rpm_hi')::float8, 0)),
        (3, coalesce((e.v ->> 'seconds')::float8, 0)),
        (4, coalesce((e.v ->> 'revolutions')::float8, 0)),
        (5, (e.v ->> 'mean_thrust_n')::float8)) AS k (j, x)
$$;

ALTER TABLE motor_runs ADD COLUMN bins_array float8[] NOT NULL
    GENERATED ALWAYS AS (motor_bins_array(bins)) STORED;
