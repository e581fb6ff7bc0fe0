-- Every change to an API key (its revocation above all) is announced on the
-- channel rotorwright_api_keys with the key's id, so service instances that
-- keep authenticated keys briefly in memory drop them at once, whichever
-- instance or tool made the change.
CREATE FUNCTION api_keys_notify() RETURNS trigger LANGUAGE plpgsql AS $$
BEGIN
    IF TG_OP = 'DELETE' THEN
        PERFORM pg_notify('rotorwright_api_keys', OLD.id::text);
    ELSE
        PERFORM pg_notify('rotorwright_api_keys', NEW.id::text);
    END IF;
    RETURN NULL;
END
$$;

CREATE TRIGGER api_keys_notify AFTER UPDATE OR DELETE ON api_keys
    FOR EACH ROW EXECUTE FUNCTION api_keys_notify();
