-- Board sign-in sessions. The browser holds a random session token in an
-- HttpOnly cookie; only its SHA-256 is stored. A session ends when it
-- expires, at sign-out, or when its API key is revoked (checked on every
-- request by joining the key).
CREATE TABLE board_sessions (
    id           uuid PRIMARY KEY,
    token_sha256 bytea NOT NULL,
    api_key_id   uuid NOT NULL REFERENCES api_keys (id),
    created_at   timestamptz NOT NULL DEFAULT now(),
    expires_at   timestamptz NOT NULL,
    ended_at     timestamptz,
    CONSTRAINT board_sessions_token_key UNIQUE (token_sha256)
);
CREATE INDEX board_sessions_key_idx ON board_sessions (api_key_id);
