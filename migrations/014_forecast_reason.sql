-- Forecast dates from usage rates saturate at a 50-year horizon: a due item
-- with no forecast date says why (beyond_horizon, no_recent_use). Items
-- written before this carry NULL until the next recompute.
ALTER TABLE due_items ADD COLUMN forecast_reason text
    CHECK (forecast_reason IN ('beyond_horizon', 'no_recent_use'));
