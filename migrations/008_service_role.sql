-- Least privilege. Migrations run as the schema's owner; the service connects
-- as a member of rotorwright_service (or as that role itself, given LOGIN),
-- which reads and writes rows but owns nothing: it cannot alter, drop or
-- disable a trigger on any table, cannot truncate, and may only INSERT and
-- SELECT the audit log (and work records, which are never edited).
--
-- Tables added by later migrations get the same DML grants automatically
-- (ALTER DEFAULT PRIVILEGES below), provided the same owner role runs them.
-- A later table the service must not update or delete from says so in its
-- own migration, e.g.:
--     REVOKE UPDATE, DELETE ON my_append_only_table FROM rotorwright_service;

-- The role is cluster-wide, so it may exist already (made by an
-- administrator ahead of time, or by another database's migration).
DO $$
BEGIN
    IF NOT EXISTS (SELECT FROM pg_roles WHERE rolname = 'rotorwright_service') THEN
        BEGIN
            CREATE ROLE rotorwright_service NOLOGIN;
        EXCEPTION
            -- Made by a concurrent migration of another database.
            WHEN duplicate_object OR unique_violation THEN NULL;
            WHEN insufficient_privilege THEN
                RAISE EXCEPTION 'role % may not create roles: have an administrator run '
                    '"CREATE ROLE rotorwright_service NOLOGIN", then migrate again', current_user
                    USING ERRCODE = 'insufficient_privilege';
        END;
    END IF;
END;
$$;

-- PostgreSQL 15 and later already refuse CREATE in public to other roles;
-- older servers allowed it. (A warning, not an error, where we are not the
-- schema's owner.)
REVOKE CREATE ON SCHEMA public FROM PUBLIC;
GRANT USAGE ON SCHEMA public TO rotorwright_service;

GRANT SELECT, INSERT, UPDATE, DELETE ON ALL TABLES IN SCHEMA public TO rotorwright_service;
-- The audit chain's trigger takes ids with nextval; UPDATE (setval) is not
-- granted.
GRANT USAGE, SELECT ON ALL SEQUENCES IN SCHEMA public TO rotorwright_service;

-- Narrower: append-only records, and the schema version (migrations only).
REVOKE UPDATE, DELETE ON audit_log FROM rotorwright_service;
REVOKE UPDATE, DELETE ON work_records FROM rotorwright_service;
REVOKE INSERT, UPDATE, DELETE ON schema_version FROM rotorwright_service;

ALTER DEFAULT PRIVILEGES IN SCHEMA public
    GRANT SELECT, INSERT, UPDATE, DELETE ON TABLES TO rotorwright_service;
ALTER DEFAULT PRIVILEGES IN SCHEMA public
    GRANT USAGE, SELECT ON SEQUENCES TO rotorwright_service;
