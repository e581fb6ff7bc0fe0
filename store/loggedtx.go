package store

import (
	"context"

	"github.com/jackc/pgx/v5"
)

// LoggedFlightTx writes a logged flight in one transaction, as
// CreateLoggedFlight does, but begun before the analysis is done: the stored
// log, by far the largest write (megabytes of TOAST chunks), goes in while
// the analysis runs (StoreLog) rather than after it, and Finish writes the
// rest. The flight's id is chosen up front and the log row's reference to
// it checked at the commit (migration 025 makes that constraint deferrable;
// other writers keep it immediate).
//
// Such a transaction holds a pool connection while the ingest reads through
// others (the facts, the take-off verdict), so it must not hold anything
// another transaction could wait for with its own connection meanwhile: it
// takes the airframe's upload lock only in Finish (as CreateLoggedFlight
// does, so uploads of one airframe are still serialised and one log makes
// one flight), and at most half the pool's connections are held so
// (DB.early); when they are, BeginLoggedFlight begins nothing and the
// ingest writes the flight at the end (CreateLoggedFlight), as before.
type LoggedFlightTx struct {
	db    *DB
	tx    pgx.Tx
	audit *[][]any
	id    string
	// Existing is the flight already recorded from this log for the
	// airframe; the transaction is then over, with nothing to write.
	Existing string

	logDone chan struct{} // closed when StoreLog's insert has ended
	logErr  error
	rawGz   []byte
	closed  bool
}

// BeginLoggedFlight begins the transaction of a new flight of airframeID from
// the log whose text has SHA-256 sha, and looks for the flight already
// recorded from the same log (Existing; Finish looks again under the lock).
// It returns nil, and no error, when the early transactions already hold
// their share of the pool: write with CreateLoggedFlight then.
func (db *DB) BeginLoggedFlight(ctx context.Context, airframeID, sha string) (*LoggedFlightTx, error) {
	select {
	case db.early <- struct{}{}:
	default:
		return nil, nil
	}
	tx, err := db.pool.Begin(ctx)
	if err != nil {
		<-db.early
		return nil, translate(err)
	}
	rows := [][]any{}
	w := &LoggedFlightTx{db: db, tx: tx, audit: &rows, id: newID()}
	pendingAudit.Store(tx, &rows)
	b := &pgx.Batch{}
	b.Queue(`SET CONSTRAINTS flight_logs_flight_id_fkey DEFERRED`)
	b.Queue(flightByLogSQL, airframeID, sha).QueryRow(w.scanExisting)
	if err := tx.SendBatch(ctx, b).Close(); err != nil {
		w.Close()
		return nil, translate(err)
	}
	if w.Existing != "" {
		w.Close()
	}
	return w, nil
}

// StoreLog inserts the log's row (lf's log fields, of the text with SHA-256
// sha, for analysis version) on another goroutine; raw gives the stored
// bytes, waiting for them if need be (the compression runs beside the
// parse). Nothing else may use the transaction until Finish or Close, which
// wait for it.
func (w *LoggedFlightTx) StoreLog(ctx context.Context, lf LoggedFlight, sha string, version int, raw func() ([]byte, error)) {
	w.logDone = make(chan struct{})
	go func() {
		defer close(w.logDone)
		if lf.RawGz, w.logErr = raw(); w.logErr != nil {
			return
		}
		w.rawGz = lf.RawGz
		lf.fillEmpty()
		w.logErr = insertFlightLog(ctx, w.tx, w.id, sha, version, &lf)
	}()
}

// Finish writes the flight, packs, figures, motor runs and events and
// commits, with the log StoreLog wrote (lf.RawGz is set from it). A
// transaction that hits a serialization failure or deadlock is rolled back
// and the whole flight written again by CreateLoggedFlight (which retries);
// an upload of the same log that got in first answers with its flight
// (created false), as CreateLoggedFlight does.
func (w *LoggedFlightTx) Finish(ctx context.Context, lf *LoggedFlight) (id string, created bool, err error) {
	w.waitLog()
	if w.rawGz != nil {
		lf.RawGz = w.rawGz
	}
	f := lf.Flight
	if err := f.Validate(); err != nil {
		w.Close()
		return "", false, err
	}
	if err := checkFlightTimes(f, w.db.now()); err != nil {
		w.Close()
		return "", false, err
	}
	err = w.logErr
	if err == nil {
		err = w.finish(ctx, lf)
	}
	w.Close()
	switch {
	case err == nil && w.Existing != "":
		return w.Existing, false, nil
	case err == nil:
		return w.id, true, nil
	case retryable(err) && lf.RawGz != nil:
		return w.db.CreateLoggedFlight(ctx, lf)
	}
	err = translate(err)
	if existing, ok := w.db.recordedBefore(ctx, f, err); ok {
		return existing, false, nil
	}
	return "", false, err
}

// scanExisting reads the flight already recorded from the log, if any.
func (w *LoggedFlightTx) scanExisting(r pgx.Row) error {
	if err := r.Scan(&w.Existing); err != nil && err != pgx.ErrNoRows {
		return err
	}
	return nil
}

func (w *LoggedFlightTx) finish(ctx context.Context, lf *LoggedFlight) error {
	f := lf.Flight
	b := &pgx.Batch{}
	b.Queue(uploadLockSQL, "ingest:"+f.AirframeID)
	b.Queue(flightByLogSQL, f.AirframeID, f.LogSHA256).QueryRow(w.scanExisting)
	if err := w.tx.SendBatch(ctx, b).Close(); err != nil || w.Existing != "" {
		return err // a flight from the same log got in first: nothing to write
	}
	if _, err := insertFlight(ctx, w.tx, f, w.id); err != nil {
		return err
	}
	if err := writeAnalysis(ctx, w.tx, w.id, f.AirframeID, lf.Analysis); err != nil {
		return err
	}
	pendingAudit.Delete(w.tx)
	return commitWithAudit(ctx, w.tx, *w.audit)
}

func (w *LoggedFlightTx) waitLog() {
	if w.logDone != nil {
		<-w.logDone
	}
}

// Close rolls the transaction back unless it was committed (harmless after
// Finish or twice), once StoreLog's insert has ended.
func (w *LoggedFlightTx) Close() {
	w.waitLog()
	if w.closed {
		return
	}
	w.closed = true
	pendingAudit.Delete(w.tx)
	// Rollback after a commit is a no-op (pgx.ErrTxClosed).
	w.tx.Rollback(context.Background())
	<-w.db.early
}
