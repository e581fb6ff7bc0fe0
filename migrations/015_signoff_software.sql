-- Sign-off and discrepancies (the 14 CFR 43.9 / 43.11 model) and software
-- configuration. Work records stay never-edited: a discrepancy a record finds
-- lives in its own table and is cleared by naming it in a later record.

ALTER TABLE work_records DROP CONSTRAINT work_records_action_check;
ALTER TABLE work_records
    ADD CONSTRAINT work_records_action_check
        CHECK (action IN ('inspect', 'service', 'repair', 'replace', 'retire', 'update')),
    -- the approver's certificate (43.9(a)(4)) and the return to service statement
    ADD COLUMN certificate_number text,
    ADD COLUMN certificate_kind   text,
    ADD COLUMN return_to_service  text,
    -- a software update: the version before and after
    ADD COLUMN software_from text,
    ADD COLUMN software_to   text,
    -- discrepancies this record clears
    ADD COLUMN clears uuid[] NOT NULL DEFAULT '{}',
    ADD CONSTRAINT work_records_update_version CHECK (action <> 'update' OR software_to IS NOT NULL);

CREATE TABLE discrepancies (
    id             uuid PRIMARY KEY,
    work_record_id uuid NOT NULL REFERENCES work_records (id),   -- the entry that found it
    airframe_id    uuid REFERENCES airframes (id),
    part_id        uuid REFERENCES parts (id),
    found_at       timestamptz NOT NULL,
    description    text NOT NULL CHECK (description <> ''),
    grounding      boolean NOT NULL DEFAULT false,
    cleared_at     timestamptz,
    cleared_by     uuid REFERENCES work_records (id),              -- the later entry that cleared it
    created_at     timestamptz NOT NULL DEFAULT now(),
    CHECK (airframe_id IS NOT NULL OR part_id IS NOT NULL),
    CHECK ((cleared_at IS NULL) = (cleared_by IS NULL)),
    CHECK (cleared_at IS NULL OR cleared_at >= found_at)
);
CREATE INDEX discrepancies_airframe_idx ON discrepancies (airframe_id, found_at) WHERE airframe_id IS NOT NULL;
CREATE INDEX discrepancies_part_idx ON discrepancies (part_id, found_at) WHERE part_id IS NOT NULL;
CREATE INDEX discrepancies_open_idx ON discrepancies (found_at) WHERE cleared_at IS NULL;

-- Software: the version a part runs now, and every version it ran over time.
-- The version given when the part is registered holds from the start (lower
-- bound unbounded); each update record closes one span and opens the next.
ALTER TABLE parts ADD COLUMN software_version text,
    ADD CONSTRAINT parts_software_kind
        CHECK (software_version IS NULL OR kind IN ('flight_controller', 'esc', 'gimbal', 'camera', 'gnss'));

CREATE TABLE part_software (
    id             uuid PRIMARY KEY,
    part_id        uuid NOT NULL REFERENCES parts (id),
    version        text NOT NULL CHECK (version <> ''),
    during         tstzrange NOT NULL CHECK (NOT isempty(during)),
    work_record_id uuid REFERENCES work_records (id),
    CONSTRAINT part_software_overlap EXCLUDE USING gist (part_id WITH =, during WITH &&)
);
CREATE INDEX part_software_part_idx ON part_software USING gist (part_id, during);

-- What a flight ran, as its log's '# software:' line (or the pilot) said.
ALTER TABLE flights ADD COLUMN software text;

ALTER TABLE events DROP CONSTRAINT events_kind_check;
ALTER TABLE events ADD CONSTRAINT events_kind_check
    CHECK (kind IN ('hard_landing', 'crash', 'prop_strike', 'overdischarge', 'overcurrent', 'pack_swelling',
                    'overtemp', 'firmware_change', 'note', 'flown_not_ready', 'software_mismatch'));
