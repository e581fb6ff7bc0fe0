-- Pack check records and the computed health of parts and airframes.

CREATE TABLE pack_checks (
    id            uuid PRIMARY KEY,
    part_id       uuid NOT NULL REFERENCES parts (id),
    at            timestamptz NOT NULL,
    kind          text NOT NULL CHECK (kind IN ('charge', 'storage', 'capacity_test')),
    mah_in        double precision CHECK (mah_in >= 0),    -- charge put in (charge)
    mah_out       double precision CHECK (mah_out >= 0),   -- charge taken out (capacity test)
    rest_v_before double precision CHECK (rest_v_before > 0),
    rest_v_after  double precision CHECK (rest_v_after > 0),
    pack_ir_mohm  double precision CHECK (pack_ir_mohm > 0),
    cell_v        double precision[],
    cell_ir_mohm  double precision[],
    notes         text NOT NULL DEFAULT '',
    created_at    timestamptz NOT NULL DEFAULT now()
);
CREATE INDEX pack_checks_part_idx ON pack_checks (part_id, at);

-- Health views as last computed (after an ingest, or by a fleet recompute).
CREATE TABLE part_health (
    part_id     uuid PRIMARY KEY REFERENCES parts (id),
    computed_at timestamptz NOT NULL,
    status      text NOT NULL,
    view        jsonb NOT NULL
);

CREATE TABLE airframe_trends (
    airframe_id uuid PRIMARY KEY REFERENCES airframes (id),
    computed_at timestamptz NOT NULL,
    flagged     boolean NOT NULL,
    view        jsonb NOT NULL
);

CREATE INDEX flight_packs_part_time_idx ON flight_packs (part_id, lower(airborne));
