-- Notices (service bulletins, airworthiness directives and the like) and
-- their compliance. Applicability and the window are JSON validated by the
-- service (fleet.Notice); a subject's status is computed from the register's
-- history, the work records naming the notice and the decisions that it
-- does not apply.
CREATE TABLE notices (
    id             uuid PRIMARY KEY,
    reference      text NOT NULL,
    title          text NOT NULL,
    issued_on      date NOT NULL,
    revision       text NOT NULL,
    category       text NOT NULL CHECK (category IN ('mandatory', 'advisory')),
    required_work  text NOT NULL,
    applicability  jsonb NOT NULL CHECK (jsonb_typeof(applicability) = 'object'),
    window_spec    jsonb NOT NULL CHECK (jsonb_typeof(window_spec) = 'object'),
    withdrawn_at   timestamptz,
    version        int NOT NULL DEFAULT 1,
    created_at     timestamptz NOT NULL DEFAULT now(),
    updated_at     timestamptz NOT NULL DEFAULT now(),
    CONSTRAINT notices_reference_key UNIQUE (reference)
);

-- A subject the notice does not apply to after all, with the reason and who
-- decided (e.g. the affected batch was reworked at the factory).
CREATE TABLE notice_decisions (
    notice_id    uuid NOT NULL REFERENCES notices (id),
    subject_kind text NOT NULL CHECK (subject_kind IN ('airframe', 'part')),
    subject_id   uuid NOT NULL,
    reason       text NOT NULL CHECK (reason <> ''),
    decided_by   text NOT NULL,
    decided_at   timestamptz NOT NULL DEFAULT now(),
    PRIMARY KEY (notice_id, subject_id)
);

-- A work record naming the notice complies with it for its subject.
ALTER TABLE work_records ADD COLUMN notice_id uuid REFERENCES notices (id);
CREATE INDEX work_records_notice_idx ON work_records (notice_id, at) WHERE notice_id IS NOT NULL;

-- Open notices join the due list beside the service rules.
ALTER TABLE due_items DROP CONSTRAINT due_items_pkey;
ALTER TABLE due_items ALTER COLUMN rule_id DROP NOT NULL,
    ADD COLUMN notice_id uuid REFERENCES notices (id) ON DELETE CASCADE,
    ADD CONSTRAINT due_items_source CHECK (num_nonnulls(rule_id, notice_id) = 1);
CREATE UNIQUE INDEX due_items_key ON due_items (coalesce(rule_id, notice_id), subject_id);
