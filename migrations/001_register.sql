-- The fleet register: layouts, airframes, parts, fits, jobs, flights, events,
-- keys and the append-only audit log.
CREATE EXTENSION IF NOT EXISTS btree_gist;

CREATE TABLE layouts (
    name       text PRIMARY KEY CHECK (name ~ '^[a-z0-9][a-z0-9-]{0,39}$'),
    builtin    boolean NOT NULL DEFAULT false,
    positions  jsonb NOT NULL CHECK (jsonb_typeof(positions) = 'array'),
    created_at timestamptz NOT NULL DEFAULT now()
);

-- Built-in X layouts: positions clockwise from the front-right arm, adjacent
-- rotors spinning opposite ways.
INSERT INTO layouts (name, builtin, positions) VALUES
('quad-x', true, '[{"label":"m1","rotation":"ccw","arm_deg":45},{"label":"m2","rotation":"cw","arm_deg":135},
  {"label":"m3","rotation":"ccw","arm_deg":225},{"label":"m4","rotation":"cw","arm_deg":315}]'),
('hex-x', true, '[{"label":"m1","rotation":"ccw","arm_deg":30},{"label":"m2","rotation":"cw","arm_deg":90},
  {"label":"m3","rotation":"ccw","arm_deg":150},{"label":"m4","rotation":"cw","arm_deg":210},
  {"label":"m5","rotation":"ccw","arm_deg":270},{"label":"m6","rotation":"cw","arm_deg":330}]'),
('octo-x', true, '[{"label":"m1","rotation":"ccw","arm_deg":22.5},{"label":"m2","rotation":"cw","arm_deg":67.5},
  {"label":"m3","rotation":"ccw","arm_deg":112.5},{"label":"m4","rotation":"cw","arm_deg":157.5},
  {"label":"m5","rotation":"ccw","arm_deg":202.5},{"label":"m6","rotation":"cw","arm_deg":247.5},
  {"label":"m7","rotation":"ccw","arm_deg":292.5},{"label":"m8","rotation":"cw","arm_deg":337.5}]');

CREATE TABLE airframes (
    id                uuid PRIMARY KEY,
    code              text NOT NULL,
    name              text NOT NULL DEFAULT '',
    model             text NOT NULL DEFAULT '',
    layout            text NOT NULL REFERENCES layouts (name),
    cells_s           int NOT NULL CHECK (cells_s BETWEEN 1 AND 24),
    packs_per_flight  int NOT NULL DEFAULT 1 CHECK (packs_per_flight BETWEEN 1 AND 8),
    empty_mass_g      double precision CHECK (empty_mass_g > 0),
    mtow_g            double precision CHECK (mtow_g > 0),
    rotor_diameter_mm double precision CHECK (rotor_diameter_mm > 0),
    hold_reason       text,
    retired_at        timestamptz,
    notes             text NOT NULL DEFAULT '',
    version           int NOT NULL DEFAULT 1,
    created_at        timestamptz NOT NULL DEFAULT now(),
    updated_at        timestamptz NOT NULL DEFAULT now(),
    CONSTRAINT airframes_code_key UNIQUE (code)
);

CREATE TABLE parts (
    id             uuid PRIMARY KEY,
    kind           text NOT NULL CHECK (kind IN ('motor', 'propeller', 'pack', 'esc', 'flight_controller',
                                                 'camera', 'gimbal', 'gnss', 'frame', 'other')),
    serial         text NOT NULL,
    part_number    text NOT NULL DEFAULT '',
    lot            text NOT NULL DEFAULT '',
    maker          text NOT NULL DEFAULT '',
    acquired_on    date,
    mass_g         double precision CHECK (mass_g > 0),
    status         text NOT NULL DEFAULT 'stock' CHECK (status IN ('stock', 'fitted', 'quarantine', 'retired')),
    retired_reason text,
    specs          jsonb NOT NULL DEFAULT '{}',
    notes          text NOT NULL DEFAULT '',
    version        int NOT NULL DEFAULT 1,
    created_at     timestamptz NOT NULL DEFAULT now(),
    updated_at     timestamptz NOT NULL DEFAULT now(),
    CONSTRAINT parts_kind_serial_key UNIQUE (kind, serial)
);
CREATE INDEX parts_lot_idx ON parts (lot) WHERE lot <> '';
CREATE INDEX parts_part_number_idx ON parts (part_number) WHERE part_number <> '';

-- A part's stay at a place: during = [fitted_at, removed_at). The database,
-- not the application, keeps a part in one place at a time and a place
-- holding one part of a kind at a time.
CREATE TABLE fits (
    id             uuid PRIMARY KEY,
    part_id        uuid NOT NULL REFERENCES parts (id),
    airframe_id    uuid NOT NULL REFERENCES airframes (id),
    kind           text NOT NULL,
    position       text NOT NULL,
    during         tstzrange NOT NULL CHECK (lower(during) IS NOT NULL AND lower_inc(during)
                                             AND NOT upper_inc(during) AND NOT isempty(during)),
    removal_reason text,
    created_at     timestamptz NOT NULL DEFAULT now(),
    CONSTRAINT fits_part_overlap EXCLUDE USING gist (part_id WITH =, during WITH &&),
    CONSTRAINT fits_position_overlap EXCLUDE USING gist (airframe_id WITH =, kind WITH =, position WITH =, during WITH &&)
);
CREATE INDEX fits_airframe_idx ON fits USING gist (airframe_id, during);

CREATE TABLE jobs (
    id         uuid PRIMARY KEY,
    code       text NOT NULL,
    client     text NOT NULL,
    site       text NOT NULL DEFAULT '',
    starts_on  date,
    ends_on    date,
    notes      text NOT NULL DEFAULT '',
    version    int NOT NULL DEFAULT 1,
    created_at timestamptz NOT NULL DEFAULT now(),
    updated_at timestamptz NOT NULL DEFAULT now(),
    CONSTRAINT jobs_code_key UNIQUE (code),
    CHECK (ends_on IS NULL OR starts_on IS NULL OR ends_on >= starts_on)
);

CREATE TABLE flights (
    id               uuid PRIMARY KEY,
    airframe_id      uuid NOT NULL REFERENCES airframes (id),
    job_id           uuid REFERENCES jobs (id),
    pilot            text NOT NULL,
    takeoff_at       timestamptz NOT NULL,
    landing_at       timestamptz NOT NULL,
    airborne         tstzrange GENERATED ALWAYS AS (tstzrange(takeoff_at, landing_at, '[)')) STORED,
    takeoff_mass_g   double precision CHECK (takeoff_mass_g > 0),
    site_elevation_m double precision,
    source           text NOT NULL DEFAULT 'manual' CHECK (source IN ('manual', 'log')),
    log_sha256       text,
    notes            text NOT NULL DEFAULT '',
    override_reason  text,
    created_at       timestamptz NOT NULL DEFAULT now(),
    CONSTRAINT flights_landing_after_takeoff CHECK (landing_at > takeoff_at),
    CONSTRAINT flights_airframe_overlap EXCLUDE USING gist (airframe_id WITH =, airborne WITH &&),
    CONSTRAINT flights_log_key UNIQUE (airframe_id, log_sha256)
);
CREATE INDEX flights_job_idx ON flights (job_id, takeoff_at) WHERE job_id IS NOT NULL;
CREATE INDEX flights_airframe_time_idx ON flights (airframe_id, takeoff_at);

-- airborne is copied from the flight so that one pack cannot be in two
-- overlapping flights (of any airframe).
CREATE TABLE flight_packs (
    flight_id uuid NOT NULL REFERENCES flights (id),
    part_id   uuid NOT NULL REFERENCES parts (id),
    slot      int NOT NULL CHECK (slot BETWEEN 1 AND 8),
    airborne  tstzrange NOT NULL,
    PRIMARY KEY (flight_id, slot),
    CONSTRAINT flight_packs_part_once UNIQUE (flight_id, part_id),
    CONSTRAINT flight_packs_overlap EXCLUDE USING gist (part_id WITH =, airborne WITH &&)
);
CREATE INDEX flight_packs_part_idx ON flight_packs (part_id);

CREATE TABLE events (
    id          uuid PRIMARY KEY,
    at          timestamptz NOT NULL,
    kind        text NOT NULL CHECK (kind IN ('hard_landing', 'crash', 'prop_strike', 'overdischarge', 'overcurrent',
                                               'pack_swelling', 'overtemp', 'firmware_change', 'note')),
    severity    text NOT NULL CHECK (severity IN ('info', 'warning', 'critical')),
    airframe_id uuid REFERENCES airframes (id),
    part_id     uuid REFERENCES parts (id),
    flight_id   uuid REFERENCES flights (id),
    detail      text NOT NULL DEFAULT '',
    resolved_at timestamptz,
    resolution  text,
    resolved_by text,
    version     int NOT NULL DEFAULT 1,
    created_at  timestamptz NOT NULL DEFAULT now(),
    CHECK (airframe_id IS NOT NULL OR part_id IS NOT NULL OR flight_id IS NOT NULL)
);
CREATE INDEX events_airframe_idx ON events (airframe_id, at) WHERE airframe_id IS NOT NULL;
CREATE INDEX events_part_idx ON events (part_id, at) WHERE part_id IS NOT NULL;
CREATE INDEX events_open_idx ON events (airframe_id) WHERE resolved_at IS NULL;

CREATE TABLE api_keys (
    id           uuid PRIMARY KEY,
    name         text NOT NULL,
    role         text NOT NULL CHECK (role IN ('viewer', 'pilot', 'technician', 'admin')),
    token_sha256 bytea NOT NULL,
    created_at   timestamptz NOT NULL DEFAULT now(),
    revoked_at   timestamptz,
    CONSTRAINT api_keys_token_key UNIQUE (token_sha256)
);

CREATE TABLE audit_log (
    id         bigserial PRIMARY KEY,
    at         timestamptz NOT NULL DEFAULT now(),
    actor      uuid,
    actor_name text NOT NULL DEFAULT '',
    request_id text NOT NULL DEFAULT '',
    method     text NOT NULL DEFAULT '',
    route      text NOT NULL DEFAULT '',
    entity     text NOT NULL,
    entity_id  text NOT NULL,
    before     jsonb,
    after      jsonb
);
CREATE INDEX audit_log_entity_idx ON audit_log (entity, entity_id, id);

-- The audit log is append-only: rows can be added, never changed or removed.
CREATE FUNCTION audit_log_refuse() RETURNS trigger LANGUAGE plpgsql AS $$
BEGIN
    RAISE EXCEPTION 'audit_log is append-only: % refused', TG_OP USING ERRCODE = 'insufficient_privilege';
END;
$$;
CREATE TRIGGER audit_log_no_update BEFORE UPDATE OR DELETE ON audit_log
    FOR EACH ROW EXECUTE FUNCTION audit_log_refuse();
CREATE TRIGGER audit_log_no_truncate BEFORE TRUNCATE ON audit_log
    FOR EACH STATEMENT EXECUTE FUNCTION audit_log_refuse();
