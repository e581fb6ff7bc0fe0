-- Tamper-evident audit log: each row carries prev_hash (the previous row's
-- hash) and hash = SHA-256(prev_hash || canonical content). A BEFORE INSERT
-- trigger fills both in the inserting transaction, so every path that appends
-- a row is chained. Appends are serialised by a transaction-scoped advisory
-- lock; the id is taken after the lock, so id order is chain order, and a
-- unique prev_hash forbids forks. `rotorwright audit verify` recomputes the
-- chain outside the database (store/auditchain.go holds the same canonical
-- form) and names the first row that fails.

-- One field of the canonical content: '-' for NULL, else its length in bytes,
-- ':' and the text, so no two different rows encode alike.
CREATE FUNCTION audit_field(v text) RETURNS text LANGUAGE sql IMMUTABLE AS $$
    SELECT CASE WHEN v IS NULL THEN '-' ELSE octet_length(v)::text || ':' || v END
$$;

CREATE FUNCTION audit_canonical(r audit_log) RETURNS text LANGUAGE sql STABLE AS $$
    SELECT audit_field(r.id::text)
        || audit_field(to_char(r.at AT TIME ZONE 'UTC', 'YYYY-MM-DD"T"HH24:MI:SS.US"Z"'))
        || audit_field(r.actor::text) || audit_field(r.actor_name) || audit_field(r.request_id)
        || audit_field(r.method) || audit_field(r.route) || audit_field(r.entity) || audit_field(r.entity_id)
        || audit_field(r.before::text) || audit_field(r.after::text)
$$;

ALTER TABLE audit_log ADD COLUMN prev_hash bytea, ADD COLUMN hash bytea;

-- Chain the rows written before this migration, oldest first.
ALTER TABLE audit_log DISABLE TRIGGER audit_log_no_update;
DO $$
DECLARE
    r audit_log;
    prev bytea := '\x0000000000000000000000000000000000000000000000000000000000000000';
BEGIN
    FOR r IN SELECT * FROM audit_log ORDER BY id LOOP
        UPDATE audit_log SET prev_hash = prev, hash = sha256(prev || convert_to(audit_canonical(r), 'UTF8'))
        WHERE id = r.id RETURNING hash INTO prev;
    END LOOP;
END;
$$;
ALTER TABLE audit_log ENABLE TRIGGER audit_log_no_update;

ALTER TABLE audit_log ALTER COLUMN prev_hash SET NOT NULL, ALTER COLUMN hash SET NOT NULL,
    ADD CONSTRAINT audit_log_hash_length CHECK (octet_length(hash) = 32 AND octet_length(prev_hash) = 32);
CREATE UNIQUE INDEX audit_log_prev_hash_key ON audit_log (prev_hash);

CREATE FUNCTION audit_log_chain() RETURNS trigger LANGUAGE plpgsql AS $$
DECLARE
    prev bytea;
BEGIN
    -- Under a snapshot isolation level the transaction would not see the
    -- previous writer's row after waiting for the lock, and would fork.
    IF current_setting('transaction_isolation') <> 'read committed' THEN
        RAISE EXCEPTION 'audit_log appends need READ COMMITTED isolation, not %', current_setting('transaction_isolation');
    END IF;
    PERFORM pg_advisory_xact_lock(hashtextextended('rotorwright audit_log chain', 0));
    SELECT hash INTO prev FROM audit_log ORDER BY id DESC LIMIT 1;
    NEW.id := nextval(pg_get_serial_sequence('audit_log', 'id'));
    NEW.prev_hash := coalesce(prev, '\x0000000000000000000000000000000000000000000000000000000000000000'::bytea);
    NEW.hash := sha256(NEW.prev_hash || convert_to(audit_canonical(NEW), 'UTF8'));
    RETURN NEW;
END;
$$;
-- The trigger takes the id after the lock; a default taken before it would
-- only leave gaps.
ALTER TABLE audit_log ALTER COLUMN id DROP DEFAULT;
CREATE TRIGGER audit_log_chain BEFORE INSERT ON audit_log FOR EACH ROW EXECUTE FUNCTION audit_log_chain();
