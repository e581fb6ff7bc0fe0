-- Scheduled-job run log and the notification outbox (package schedule).

-- One row per scheduled-job attempt. A run that wins the job's advisory lock
-- writes its row as 'running' at once (committed on its own, so others can see
-- it) and ends it 'ok' in the job's own transaction, or 'failed' after the
-- rollback. A replica that loses the lock, or finds the tick already done,
-- writes a 'skipped' row with the reason in error. A 'running' row found while
-- holding the lock belongs to a run that died; the next run marks it failed.
CREATE TABLE job_runs (
    id          bigserial PRIMARY KEY,
    name        text NOT NULL,
    started_at  timestamptz NOT NULL DEFAULT now(),
    finished_at timestamptz,
    status      text NOT NULL CHECK (status IN ('running', 'ok', 'failed', 'skipped')),
    error       text,
    counts      jsonb CHECK (counts IS NULL OR jsonb_typeof(counts) = 'object'),
    CHECK ((status = 'running') = (finished_at IS NULL))
);

-- The latest runs of a job, and the "did this tick already run" check.
CREATE INDEX job_runs_name_started ON job_runs (name, started_at DESC);

-- Notifications written in the same transaction as the change they report and
-- POSTed to every configured webhook URL. The id is the delivery id receivers
-- use to drop duplicates. delivered_urls lists the URLs that already answered
-- 2xx, so a retry posts only to the others. next_attempt_at NULL means
-- delivery was given up after the maximum attempts (set it to now() to retry).
CREATE TABLE outbox (
    id              uuid PRIMARY KEY,
    created_at      timestamptz NOT NULL DEFAULT now(),
    kind            text NOT NULL CHECK (kind <> ''),
    subject         text NOT NULL,
    payload         jsonb NOT NULL,
    attempts        int NOT NULL DEFAULT 0 CHECK (attempts >= 0),
    next_attempt_at timestamptz DEFAULT now(),
    delivered_at    timestamptz,
    delivered_urls  text[] NOT NULL DEFAULT '{}',
    last_error      text
);

-- What the deliverer claims: undelivered rows that are due.
CREATE INDEX outbox_due ON outbox (next_attempt_at) WHERE delivered_at IS NULL;
