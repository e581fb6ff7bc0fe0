package health

import (
	"context"
	"encoding/json"
	"sync"

	"github.com/rotorwright/rotorwright/store"
)

// Refreshing is a Refresh under way (StartRefresh). Once Done is closed it
// holds the views the refresh stored, as stored, so that a due list
// computed beside it need not read them back (a quad's motor views at 500
// flights are about 160 kB of JSON the database would decompress and print
// again). A nil Refreshing is a refresh already done.
type Refreshing struct {
	done chan struct{}
	err  error
	// mark is the flight's store.FlightMark read before the refresh began
	// (markOK false: it could not be read).
	mark   int64
	markOK bool
	mu     sync.Mutex
	parts  map[string]json.RawMessage
	trends map[string]json.RawMessage
}

// StartRefresh starts Refresh of the flight on another goroutine, once it
// has read the flight's mark (Mark): before the refresh and whatever runs
// beside it read anything, so a flight recorded meanwhile shows as a
// different mark afterwards.
func (s *Service) StartRefresh(ctx context.Context, flightID string) *Refreshing {
	r := &Refreshing{done: make(chan struct{}), parts: map[string]json.RawMessage{}, trends: map[string]json.RawMessage{}}
	if m, err := s.DB.FlightMark(ctx, flightID); err == nil {
		r.mark, r.markOK = m, true
	}
	c := *s
	c.stored = r
	go func() {
		defer close(r.done)
		r.err = c.Refresh(ctx, flightID)
	}()
	return r
}

// Mark is the flight's store.FlightMark read before the refresh began; ok
// is false when it could not be read.
func (r *Refreshing) Mark() (mark int64, ok bool) { return r.mark, r.markOK }

// Done is closed when the refresh has ended.
func (r *Refreshing) Done() <-chan struct{} { return r.done }

// Err is the refresh's error, once Done is closed.
func (r *Refreshing) Err() error { return r.err }

// PartView is the view of the part the refresh stored, once Done is closed
// and Err is nil (ok false: it stored none for that part).
func (r *Refreshing) PartView(id string) (json.RawMessage, bool) {
	r.mu.Lock()
	defer r.mu.Unlock()
	v, ok := r.parts[id]
	return v, ok
}

// TrendsView is the airframe's trends the refresh stored, as PartView.
func (r *Refreshing) TrendsView(id string) (json.RawMessage, bool) {
	r.mu.Lock()
	defer r.mu.Unlock()
	v, ok := r.trends[id]
	return v, ok
}

// keep records views as they were stored: airframes' trends, or parts'.
func (r *Refreshing) keep(trends bool, rows []store.HealthRow) {
	r.mu.Lock()
	defer r.mu.Unlock()
	m := r.parts
	if trends {
		m = r.trends
	}
	for _, row := range rows {
		m[row.ID] = row.JSON
	}
}

// marshalRows encodes the rows' views for storing (store.MarshalView), so
// that what is stored can also be kept.
func marshalRows(rows []store.HealthRow) error {
	for i := range rows {
		b, err := store.MarshalView(rows[i].View)
		if err != nil {
			return err
		}
		rows[i].JSON = b
	}
	return nil
}
