-- Idempotency-Key on POST (IETF httpapi draft): a retry after completion
-- gets the stored result; a retry while the first is in progress gets 409;
-- the same key with another body gets 422. Keys are scoped to the API key
-- that sent them and expire after 24 hours.
CREATE TABLE idempotency_keys (
    api_key_id   uuid NOT NULL REFERENCES api_keys (id),
    key          text NOT NULL,
    route        text NOT NULL,
    body_sha256  bytea NOT NULL,
    status       int,            -- NULL while the first request is in progress
    content_type text,
    response     bytea,
    created_at   timestamptz NOT NULL DEFAULT now(),
    PRIMARY KEY (api_key_id, key)
);
CREATE INDEX idempotency_keys_created_idx ON idempotency_keys (created_at);
