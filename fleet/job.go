package fleet

import "time"

// Job is a client engagement that flights serve.
type Job struct {
	ID        string    `json:"id"`
	Code      string    `json:"code"`
	Client    string    `json:"client"`
	Site      string    `json:"site"`
	StartsOn  *string   `json:"starts_on"`
	EndsOn    *string   `json:"ends_on"`
	Notes     string    `json:"notes"`
	Version   int       `json:"version"`
	CreatedAt time.Time `json:"created_at"`
	UpdatedAt time.Time `json:"updated_at"`
}

// Validate checks a job.
func (j *Job) Validate() error {
	if !codeRe.MatchString(j.Code) {
		return FieldError("code", "must be 1-32 letters, digits, '_', '.' or '-', starting with a letter or digit")
	}
	if err := checkText("client", j.Client, 1, 200); err != nil {
		return err
	}
	if err := checkText("site", j.Site, 0, 200); err != nil {
		return err
	}
	if err := checkText("notes", j.Notes, 0, 4000); err != nil {
		return err
	}
	var start, end time.Time
	var err error
	if j.StartsOn != nil {
		if start, err = time.Parse(time.DateOnly, *j.StartsOn); err != nil {
			return FieldError("starts_on", "must be a date YYYY-MM-DD")
		}
	}
	if j.EndsOn != nil {
		if end, err = time.Parse(time.DateOnly, *j.EndsOn); err != nil {
			return FieldError("ends_on", "must be a date YYYY-MM-DD")
		}
		if j.StartsOn != nil && end.Before(start) {
			return FieldError("ends_on", "must not be before starts_on")
		}
	}
	return nil
}

// ETagVersion is the version an ETag names.
func (j *Job) ETagVersion() int { return j.Version }
