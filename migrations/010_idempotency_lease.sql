-- An Idempotency-Key claim is a lease, not a lock for a day: the request
-- holding it renews it while it runs; if the service dies, loses the
-- database or the client, the lease runs out and a retry takes the key over.
-- claim names the holder, so a request whose lease was taken over cannot
-- complete or release the key under the new holder. headers keeps the
-- response headers a replay must return (ETag, Location).
ALTER TABLE idempotency_keys
    ADD COLUMN lease_until timestamptz,
    ADD COLUMN claim uuid,
    ADD COLUMN headers jsonb NOT NULL DEFAULT '{}';
