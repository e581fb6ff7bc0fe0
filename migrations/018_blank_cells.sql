-- Blank cells per optional log column (by the service's column name), as the
-- parser counted them: a blank is "no reading at this sample". Logs stored
-- before this migration were read only when they had no blank cell.
ALTER TABLE flight_logs ADD COLUMN blank_cells jsonb NOT NULL DEFAULT '{}';
