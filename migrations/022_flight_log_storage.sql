-- A stored log is already gzip. Under the default storage (EXTENDED) the
-- database tries its own compression (pglz) on every new log first, which
-- on gzip output runs most of the way through before giving up: about 100 ms
-- of a 4 MB log's insert against about 16 ms without it (measured on
-- PostgreSQL 15, see DEVELOPERS.md, Performance). EXTERNAL keeps the value
-- out of line, uncompressed by the database. Only the storage of new values
-- changes; no row is rewritten.
ALTER TABLE flight_logs ALTER COLUMN raw_gz SET STORAGE EXTERNAL;
