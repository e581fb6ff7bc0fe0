-- The maintenance programme: service rules, work records and the due list.

CREATE TABLE service_rules (
    id              uuid PRIMARY KEY,
    name            text NOT NULL,
    description     text NOT NULL DEFAULT '',
    applies_to      text NOT NULL CHECK (applies_to IN ('airframe', 'motor', 'propeller', 'pack', 'esc',
                                                        'flight_controller', 'camera', 'gimbal', 'gnss', 'frame', 'other')),
    part_number     text,           -- parts: only this part number
    model           text,           -- airframes: only this model
    flight_hours    double precision CHECK (flight_hours > 0),
    flights         int CHECK (flights > 0),
    days            int CHECK (days > 0),
    revolutions     double precision CHECK (revolutions > 0),
    bearing_pct     double precision CHECK (bearing_pct > 0),
    cycles          double precision CHECK (cycles > 0),      -- equivalent full cycles
    soh_below_pct   double precision CHECK (soh_below_pct > 0 AND soh_below_pct < 100),
    ir_rise_pct     double precision CHECK (ir_rise_pct > 0),
    efficiency_rise_pct double precision CHECK (efficiency_rise_pct > 0),
    vibration_rise_pct  double precision CHECK (vibration_rise_pct > 0),
    on_events       text[] NOT NULL DEFAULT '{}',
    warn_at         double precision NOT NULL DEFAULT 0.9 CHECK (warn_at > 0 AND warn_at < 1),
    grounding       boolean NOT NULL DEFAULT false,
    action          text NOT NULL CHECK (action IN ('inspect', 'replace', 'service', 'retire')),
    enabled         boolean NOT NULL DEFAULT true,
    version         int NOT NULL DEFAULT 1,
    created_at      timestamptz NOT NULL DEFAULT now(),
    updated_at      timestamptz NOT NULL DEFAULT now(),
    CONSTRAINT service_rules_name_key UNIQUE (name)
);

-- Work records follow the 14 CFR 43.9 model: the work, the date, who did it,
-- who approved the return to service. They are never edited away: a
-- correction is a new record that names the one it corrects.
CREATE TABLE work_records (
    id              uuid PRIMARY KEY,
    at              timestamptz NOT NULL,
    airframe_id     uuid REFERENCES airframes (id),
    part_id         uuid REFERENCES parts (id),
    rule_id         uuid REFERENCES service_rules (id),
    action          text NOT NULL CHECK (action IN ('inspect', 'service', 'repair', 'replace', 'retire')),
    work            text NOT NULL,
    performed_by    text NOT NULL,
    approved_by     text,
    position        text,
    removed_part_id uuid REFERENCES parts (id),
    fitted_part_id  uuid REFERENCES parts (id),
    resolves        uuid[] NOT NULL DEFAULT '{}',
    corrects_id     uuid REFERENCES work_records (id),
    airframe_hours  double precision,   -- the airframe's total time in service at the entry
    created_at      timestamptz NOT NULL DEFAULT now(),
    CHECK (airframe_id IS NOT NULL OR part_id IS NOT NULL)
);
CREATE INDEX work_records_rule_idx ON work_records (rule_id, part_id, airframe_id, at);
CREATE INDEX work_records_airframe_idx ON work_records (airframe_id, at);

CREATE FUNCTION work_records_refuse() RETURNS trigger LANGUAGE plpgsql AS $$
BEGIN
    RAISE EXCEPTION 'work records are never edited: record a correction instead (% refused)', TG_OP
        USING ERRCODE = 'insufficient_privilege';
END;
$$;
CREATE TRIGGER work_records_no_update BEFORE UPDATE OR DELETE ON work_records
    FOR EACH ROW EXECUTE FUNCTION work_records_refuse();

-- The computed due list: one row per rule and subject, rewritten by the
-- recompute (per airframe after each change, for the fleet by schedule).
CREATE TABLE due_items (
    rule_id       uuid NOT NULL REFERENCES service_rules (id) ON DELETE CASCADE,
    subject_kind  text NOT NULL CHECK (subject_kind IN ('airframe', 'part')),
    subject_id    uuid NOT NULL,
    airframe_id   uuid REFERENCES airframes (id),
    part_number   text,
    last_done_at  timestamptz,
    since         timestamptz,
    usage         jsonb NOT NULL,
    fraction      double precision NOT NULL,
    status        text NOT NULL CHECK (status IN ('ok', 'due_soon', 'overdue')),
    grounding     boolean NOT NULL,
    reason        text NOT NULL DEFAULT '',
    forecast_date timestamptz,
    computed_at   timestamptz NOT NULL,
    PRIMARY KEY (rule_id, subject_id)
);
CREATE INDEX due_items_airframe_idx ON due_items (airframe_id);
CREATE INDEX due_items_status_idx ON due_items (status, forecast_date);

-- The default programme. Every limit is a starting point for the firm to
-- edit: common practice or a manufacturer-style placeholder, never a
-- regulation. Defer to the manufacturer's instructions and local rules.
INSERT INTO service_rules (id, name, description, applies_to, flight_hours, flights, days, revolutions,
    bearing_pct, cycles, soh_below_pct, ir_rise_pct, efficiency_rise_pct, vibration_rise_pct, on_events,
    warn_at, grounding, action) VALUES
('0190f7a0-0000-7000-8000-00000000a001', 'airframe periodic inspection',
 'Inspect arms, mounts, fasteners, wiring and connectors every 25 flight hours or 90 days. Placeholder in the style of a maker''s schedule; set your own (FAA AC 107-2: where the maker gives none, the operator sets its own programme).',
 'airframe', 25, NULL, 90, NULL, NULL, NULL, NULL, NULL, NULL, NULL, '{}', 0.9, true, 'inspect'),
('0190f7a0-0000-7000-8000-00000000a002', 'inspection after hard landing or crash',
 'Inspect the airframe, motors and propellers before further flight after a hard landing or crash. Common practice.',
 'airframe', NULL, NULL, NULL, NULL, NULL, NULL, NULL, NULL, NULL, NULL, '{hard_landing,crash}', 0.9, true, 'inspect'),
('0190f7a0-0000-7000-8000-00000000a003', 'airframe efficiency or vibration rise',
 'Inspect propellers, motors and balance when the hover efficiency index or vibration rises over 15 % across recent flights. Placeholder limit.',
 'airframe', NULL, NULL, NULL, NULL, NULL, NULL, NULL, NULL, 15, 15, '{}', 0.9, false, 'inspect'),
('0190f7a0-0000-7000-8000-00000000a004', 'motor bearing replacement',
 'Replace the motor''s bearings (or the motor) when the bearing life model shows the rated life consumed. The rated interval is a placeholder: no published hour-based bearing interval exists; use the maker''s figure.',
 'motor', NULL, NULL, NULL, NULL, 100, NULL, NULL, NULL, NULL, NULL, '{}', 0.9, true, 'replace'),
('0190f7a0-0000-7000-8000-00000000a005', 'propeller replacement',
 'Replace a propeller after any strike (common practice, visible damage or not) or after 50 flight hours (placeholder).',
 'propeller', 50, NULL, NULL, NULL, NULL, NULL, NULL, NULL, NULL, NULL, '{prop_strike}', 0.9, true, 'replace'),
('0190f7a0-0000-7000-8000-00000000a006', 'pack retirement',
 'Retire a pack at 80 % state of health (widely used end-of-life criterion), 300 equivalent full cycles (common practice: typical cycle life 300-500) or a 100 % resistance rise (from memory), or at once if swollen (common practice: never charge a swollen pack).',
 'pack', NULL, NULL, NULL, NULL, NULL, 300, 80, 100, NULL, NULL, '{pack_swelling}', 0.9, true, 'retire');
