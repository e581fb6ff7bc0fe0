-- The request id in the audit log is always the service's own; a client's
-- X-Request-ID is kept beside it (it is the client's to choose, so it can
-- identify nothing on its own). The chain's canonical form gains the new
-- field only when set, so rows written before keep their hashes.
ALTER TABLE audit_log ADD COLUMN client_request_id text;

CREATE OR REPLACE FUNCTION audit_canonical(r audit_log) RETURNS text LANGUAGE sql STABLE AS $$
    SELECT audit_field(r.id::text)
        || audit_field(to_char(r.at AT TIME ZONE 'UTC', 'YYYY-MM-DD"T"HH24:MI:SS.US"Z"'))
        || audit_field(r.actor::text) || audit_field(r.actor_name) || audit_field(r.request_id)
        || audit_field(r.method) || audit_field(r.route) || audit_field(r.entity) || audit_field(r.entity_id)
        || audit_field(r.before::text) || audit_field(r.after::text)
        || CASE WHEN r.client_request_id IS NULL THEN '' ELSE audit_field(r.client_request_id) END
$$;
