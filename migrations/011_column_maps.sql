-- Column maps: foreign flight-log layouts described as data. column_maps
-- holds each map's current version; column_map_versions keeps every version
-- ever saved, so a log read through a map is re-read exactly as it was.
CREATE TABLE column_maps (
    id         uuid PRIMARY KEY,
    name       text NOT NULL,
    version    int NOT NULL DEFAULT 1,
    body       jsonb NOT NULL,  -- delimiter, header_row, time, columns, detect
    created_at timestamptz NOT NULL DEFAULT now(),
    updated_at timestamptz NOT NULL DEFAULT now(),
    CONSTRAINT column_maps_name_key UNIQUE (name)
);

CREATE TABLE column_map_versions (
    map_id   uuid NOT NULL REFERENCES column_maps (id) ON DELETE CASCADE,
    version  int NOT NULL,
    name     text NOT NULL,
    body     jsonb NOT NULL,
    saved_at timestamptz NOT NULL DEFAULT now(),
    PRIMARY KEY (map_id, version)
);

-- The map and version a stored log was read through (none: the native layout).
-- A version a flight refers to cannot go, so neither can its map.
ALTER TABLE flight_logs
    ADD COLUMN column_map_id uuid,
    ADD COLUMN column_map_version int,
    ADD CONSTRAINT flight_logs_column_map_fkey FOREIGN KEY (column_map_id, column_map_version)
        REFERENCES column_map_versions (map_id, version),
    ADD CONSTRAINT flight_logs_column_map_both CHECK ((column_map_id IS NULL) = (column_map_version IS NULL));
CREATE INDEX flight_logs_column_map_idx ON flight_logs (column_map_id) WHERE column_map_id IS NOT NULL;

-- Versions are history: the service adds them and never edits them (they go
-- only with their map, by the cascade, when no flight was read through it).
REVOKE UPDATE, DELETE ON column_map_versions FROM rotorwright_service;
