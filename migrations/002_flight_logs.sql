-- Flight logs and what the service computes from them.

-- The raw log, gzip-compressed, kept so figures can be recomputed when a model changes.
CREATE TABLE flight_logs (
    flight_id       uuid PRIMARY KEY REFERENCES flights (id),
    raw_gz          bytea NOT NULL,
    raw_bytes       bigint NOT NULL,
    sha256          text NOT NULL,
    columns         text[] NOT NULL,
    unknown_columns text[] NOT NULL,
    samples         int NOT NULL,
    analysed_at     timestamptz NOT NULL DEFAULT now(),
    analysis_version int NOT NULL
);

-- Per-flight figures: the ones queries filter or trend on as columns, the
-- whole analysis as JSON.
CREATE TABLE flight_metrics (
    flight_id        uuid PRIMARY KEY REFERENCES flights (id),
    run_s            double precision,
    charge_mah       double precision NOT NULL,
    energy_wh        double precision NOT NULL,
    mean_power_w     double precision NOT NULL,
    peak_a           double precision NOT NULL,
    min_pack_v       double precision NOT NULL,
    min_cell_v       double precision,
    rest_v_start     double precision,
    rest_v_end       double precision,
    ir_mohm          double precision,
    hover_rpm        double precision,
    thrust_k         double precision,
    efficiency_index double precision,
    vibration_rms    double precision,
    landing_g        double precision,
    max_alt_m        double precision,
    distance_m       double precision,
    air_density      double precision NOT NULL,
    metrics          jsonb NOT NULL
);

-- Per flight and rotor position: revolutions, run time and the load spectrum.
CREATE TABLE motor_runs (
    flight_id     uuid NOT NULL REFERENCES flights (id),
    position      text NOT NULL,
    revolutions   double precision NOT NULL,
    run_s         double precision NOT NULL,
    mean_rpm      double precision,
    thrust_mean_n double precision,
    bins          jsonb NOT NULL,
    PRIMARY KEY (flight_id, position)
);

-- Per-pack figures of a logged flight. Packs listed together feed pack_a in
-- parallel and are taken to share the load equally.
ALTER TABLE flight_packs
    ADD COLUMN charge_mah   double precision,
    ADD COLUMN energy_wh    double precision,
    ADD COLUMN min_cell_v   double precision,
    ADD COLUMN rest_v_start double precision,
    ADD COLUMN rest_v_end   double precision,
    ADD COLUMN ir_mohm      double precision;

-- Events the ingest detected (a re-analysis replaces the open ones).
ALTER TABLE events ADD COLUMN detected boolean NOT NULL DEFAULT false;
CREATE INDEX events_flight_idx ON events (flight_id) WHERE flight_id IS NOT NULL;
