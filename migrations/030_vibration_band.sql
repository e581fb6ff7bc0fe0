-- The band each flight's vibration RMS was measured over: the high-pass
-- corner and the sample rate (its Nyquist frequency is the top), so that a
-- trend compares flights logged alike only (health.trendsFrom). Filled for
-- flights analysed before from the figures kept beside them.
ALTER TABLE flight_metrics ADD COLUMN vibration_sample_hz double precision,
    ADD COLUMN vibration_cutoff_hz double precision;
UPDATE flight_metrics
SET vibration_sample_hz = (metrics->'vibration_rms'->>'sample_hz')::double precision,
    vibration_cutoff_hz = (metrics->'vibration_rms'->>'cutoff_hz')::double precision
WHERE jsonb_typeof(metrics->'vibration_rms') = 'object';
