-- Flights are facts: every flight keeps the readiness verdict as of its
-- take-off, and a flight that took off while its airframe was not ready is
-- flagged by an event of kind flown_not_ready, never refused.

-- The verdict ({at, ready, blockers, warnings, checked_at}); NULL until judged
-- (flights recorded before this migration are judged by the next recompute).
ALTER TABLE flights ADD COLUMN readiness_at_takeoff jsonb
    CHECK (readiness_at_takeoff IS NULL OR jsonb_typeof(readiness_at_takeoff) = 'object');
CREATE INDEX flights_unjudged_idx ON flights (airframe_id) WHERE readiness_at_takeoff IS NULL;

ALTER TABLE events DROP CONSTRAINT events_kind_check;
ALTER TABLE events ADD CONSTRAINT events_kind_check
    CHECK (kind IN ('hard_landing', 'crash', 'prop_strike', 'overdischarge', 'overcurrent', 'pack_swelling',
                    'overtemp', 'firmware_change', 'note', 'flown_not_ready'));

-- One flown_not_ready event per flight, ever: a re-judgement updates it (or
-- withdraws it while still open), it never opens a second.
CREATE UNIQUE INDEX events_flown_not_ready_once ON events (flight_id) WHERE kind = 'flown_not_ready';

-- The default programme puts a flight flown not ready on the due list: a
-- technician reviews it and records the review (a work record against this
-- rule, resolving the event). Not grounding: the blockers the flight flew
-- with are judged on their own; this is the review of what happened.
INSERT INTO service_rules (id, name, description, applies_to, on_events, warn_at, grounding, action) VALUES
('0190f7a0-0000-7000-8000-00000000a007', 'review of a flight flown not ready',
 'Review a flight that took off while its airframe was not ready (the flown_not_ready event names the blockers): find out why, inspect what the blockers concern, and record the review with a work record that resolves the event. Common practice for an occurrence of this kind; follow the operator''s own procedures and local rules.',
 'airframe', '{flown_not_ready}', 0.9, false, 'inspect')
ON CONFLICT (name) DO NOTHING;
