-- A log the service compresses itself at upload is packed fast (gzip with
-- Huffman coding only), so that compressing costs the upload little, and
-- marked here; the repack job rewrites it smaller (still gzip) later, after
-- checking that the new bytes give back the same text (its SHA-256 and
-- length). A log uploaded as gzip is kept as it came and never marked.
ALTER TABLE flight_logs ADD COLUMN repack boolean NOT NULL DEFAULT false;
CREATE INDEX flight_logs_repack_idx ON flight_logs (flight_id) WHERE repack;
