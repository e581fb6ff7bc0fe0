package fleet

import "time"

// Plausible times for records. A drone flight, event, fit or work record
// before 2000 is a typing error (common practice: no multirotor fleet of
// this kind kept records then), and one in the future is allowed only by
// the clock skew between a device in the field and the server.
var EarliestRecord = time.Date(2000, 1, 1, 0, 0, 0, 0, time.UTC)

// ClockSkew is how far ahead of the server clock a record may be dated.
const ClockSkew = 5 * time.Minute

// CheckTime refuses a record time outside [EarliestRecord, now+ClockSkew].
func CheckTime(field string, t, now time.Time) error {
	if t.Before(EarliestRecord) {
		return FieldError(field, "must not be before 2000-01-01T00:00:00Z")
	}
	if t.After(now.Add(ClockSkew)) {
		return FieldError(field, "must not be in the future (at most 5 minutes ahead of the server clock)")
	}
	return nil
}
