-- An upload writes its stored log (megabytes) while the log's analysis is
-- still running, in the transaction that will hold the flight, before the
-- flight's row exists: the ingest defers this reference to the commit for
-- its own transaction (SET CONSTRAINTS). Every other writer still has it
-- checked at once (INITIALLY IMMEDIATE).
ALTER TABLE flight_logs ALTER CONSTRAINT flight_logs_flight_id_fkey DEFERRABLE INITIALLY IMMEDIATE;
