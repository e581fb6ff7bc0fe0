-- A key belongs to a named person: a flight's pilot defaults to the key's
-- person, and a pilot may record flights only for themself. Keys made
-- before this migration belong to the person they were named after.
ALTER TABLE api_keys ADD COLUMN person text;
UPDATE api_keys SET person = name;
ALTER TABLE api_keys ALTER COLUMN person SET NOT NULL;

-- Who recorded an event (the key; NULL from the command line): pilots edit
-- only the events they recorded.
ALTER TABLE events ADD COLUMN created_by uuid REFERENCES api_keys (id);
