package schedule

import (
	"bytes"
	"context"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"log/slog"
	"math/rand/v2"
	"net/http"
	"slices"
	"strconv"
	"strings"
	"sync"
	"time"

	"github.com/google/uuid"
	"github.com/jackc/pgx/v5"
	"github.com/jackc/pgx/v5/pgxpool"
)

// Enqueue writes a notification in the caller's transaction, so it exists
// exactly when the change it reports commits (transactional outbox). payload
// is marshalled to JSON. The row id (a UUIDv7) is the delivery id.
func Enqueue(ctx context.Context, tx pgx.Tx, kind, subject string, payload any) error {
	if kind == "" {
		return errors.New("outbox: empty kind")
	}
	body, err := json.Marshal(payload)
	if err != nil {
		return fmt.Errorf("outbox: payload: %w", err)
	}
	id, err := uuid.NewV7()
	if err != nil {
		return err
	}
	_, err = tx.Exec(ctx, `INSERT INTO outbox (id, kind, subject, payload) VALUES ($1, $2, $3, $4)`,
		id, kind, subject, body)
	if err != nil {
		return fmt.Errorf("outbox: insert: %w", err)
	}
	return nil
}

// Delivery is the JSON body POSTed to a webhook.
type Delivery struct {
	DeliveryID uuid.UUID       `json:"delivery_id"`
	Kind       string          `json:"kind"`
	Subject    string          `json:"subject"`
	CreatedAt  time.Time       `json:"created_at"`
	Payload    json.RawMessage `json:"payload"`
}

// Headers set on every webhook POST besides Content-Type.
const (
	HeaderIdempotencyKey = "Idempotency-Key"        // the delivery id, the same on every retry
	HeaderDelivery       = "X-Rotorwright-Delivery" // the delivery id again, for receivers that log ours
	HeaderAttempt        = "X-Rotorwright-Attempt"  // 1 on the first try
)

// Deliverer POSTs due outbox rows to webhooks. Zero fields take defaults.
type Deliverer struct {
	Pool        *pgxpool.Pool
	URLs        []string     // checked at start-up with ValidateWebhookURL
	Client      *http.Client // nil: NewClient(Policy{}, 10s), public addresses only
	Backoff     func(attempt int) time.Duration
	MaxAttempts int              // after this many failed attempts the row is given up; 0 means 12
	Batch       int              // most rows one DeliverOnce handles; 0 means 100
	Now         func() time.Time // clock for due times; nil means time.Now (tests pass a fake)
	Logger      *slog.Logger
	// SigningKey, when set, signs every delivery (see Sign); without it
	// deliveries go unsigned.
	SigningKey []byte
	// Observe, when set, hears each recorded attempt on a row: outcome
	// "delivered", "failed" (another attempt follows) or "given_up", and
	// the attempt's number from 1 (the metrics' hook; it must not block).
	Observe func(outcome string, attempt int)
}

// DefaultBackoff is exponential backoff with "equal jitter": the delay
// doubles from 30 s per attempt, capped at 1 h, and a random half of it is
// dropped so retries from many rows spread out (the scheme described in the
// AWS Architecture Blog post "Exponential Backoff And Jitter", 2015, from
// memory). attempt counts failures so far, from 1.
func DefaultBackoff(attempt int) time.Duration {
	const base, ceiling = 30 * time.Second, time.Hour
	d := ceiling
	if attempt < 1 {
		attempt = 1
	}
	if attempt <= 20 { // beyond, the shift overflows and the cap applies anyway
		d = min(ceiling, base<<(attempt-1))
	}
	return d/2 + rand.N(d/2+1)
}

// defaultClient is shared by Deliverers without a Client: public addresses
// only.
var defaultClient = sync.OnceValue(func() *http.Client { return NewClient(Policy{}, 10*time.Second) })

func (d *Deliverer) client() *http.Client {
	if d.Client != nil {
		return d.Client
	}
	return defaultClient()
}

func (d *Deliverer) now() time.Time {
	if d.Now != nil {
		return d.Now()
	}
	return time.Now()
}

// DeliverOnce makes one pass: each due row at most one attempt, each in its
// own transaction holding the row (FOR UPDATE SKIP LOCKED, so concurrent
// deliverers take different rows). delivered counts rows now delivered to
// every URL, failed rows that need another attempt or were given up; err is
// a database error that ended the pass. With no URLs configured it does
// nothing, so notifications wait for a receiver instead of being dropped.
func (d *Deliverer) DeliverOnce(ctx context.Context) (delivered, failed int, err error) {
	if len(d.URLs) == 0 {
		return 0, 0, nil
	}
	batch := d.Batch
	if batch <= 0 {
		batch = 100
	}
	seen := []uuid.UUID{} // rows tried in this pass, so a zero backoff cannot loop
	for len(seen) < batch {
		id, ok, err := d.deliverNext(ctx, seen)
		if err != nil {
			return delivered, failed, err
		}
		switch {
		case id == uuid.Nil:
			return delivered, failed, nil
		case ok:
			delivered++
		default:
			failed++
		}
		seen = append(seen, id)
	}
	return delivered, failed, nil
}

// deliverNext claims one due row not in seen and tries it; id is Nil when
// none is due.
func (d *Deliverer) deliverNext(ctx context.Context, seen []uuid.UUID) (id uuid.UUID, ok bool, err error) {
	tx, err := d.Pool.Begin(ctx)
	if err != nil {
		return uuid.Nil, false, fmt.Errorf("outbox: begin: %w", err)
	}
	defer tx.Rollback(context.Background())
	var (
		dl       Delivery
		attempts int
		done     []string
	)
	err = tx.QueryRow(ctx, `SELECT id, kind, subject, created_at, payload, attempts, delivered_urls
		FROM outbox
		WHERE delivered_at IS NULL AND next_attempt_at <= $1 AND NOT (id = ANY($2))
		ORDER BY next_attempt_at
		LIMIT 1
		FOR UPDATE SKIP LOCKED`, d.now(), seen).
		Scan(&dl.DeliveryID, &dl.Kind, &dl.Subject, &dl.CreatedAt, &dl.Payload, &attempts, &done)
	if errors.Is(err, pgx.ErrNoRows) {
		return uuid.Nil, false, nil
	}
	if err != nil {
		return uuid.Nil, false, fmt.Errorf("outbox: claim: %w", err)
	}
	attempts++
	body, err := json.Marshal(dl)
	if err != nil {
		return uuid.Nil, false, err
	}
	var errs []string
	for _, u := range d.URLs {
		if slices.Contains(done, u) {
			continue
		}
		if perr := d.post(ctx, u, dl.DeliveryID, attempts, body); perr != nil {
			errs = append(errs, perr.Error())
			continue
		}
		done = append(done, u)
	}
	if ctx.Err() != nil {
		// Shutting down mid-delivery: leave the row as it was; the receivers
		// that got it will drop the retry by its id.
		return uuid.Nil, false, ctx.Err()
	}

	limit := d.MaxAttempts
	if limit <= 0 {
		limit = 12
	}
	if len(errs) == 0 {
		_, err = tx.Exec(ctx, `UPDATE outbox SET attempts = $2, delivered_urls = $3, delivered_at = now(),
			last_error = NULL WHERE id = $1`, dl.DeliveryID, attempts, done)
	} else {
		msg := strings.Join(errs, "; ")
		var next *time.Time
		if attempts < limit {
			backoff := d.Backoff
			if backoff == nil {
				backoff = DefaultBackoff
			}
			t := d.now().Add(backoff(attempts))
			next = &t
		} else {
			msg = fmt.Sprintf("gave up after %d attempts: %s", attempts, msg)
			d.logger().Error("webhook delivery given up", "delivery", dl.DeliveryID, "kind", dl.Kind, "err", msg)
		}
		_, err = tx.Exec(ctx, `UPDATE outbox SET attempts = $2, delivered_urls = $3, last_error = $4,
			next_attempt_at = $5 WHERE id = $1`, dl.DeliveryID, attempts, done, msg, next)
	}
	if err == nil {
		err = tx.Commit(ctx)
	}
	if err != nil {
		return uuid.Nil, false, fmt.Errorf("outbox: record attempt: %w", err)
	}
	if d.Observe != nil {
		outcome := "delivered"
		if len(errs) > 0 {
			outcome = "failed"
			if attempts >= limit {
				outcome = "given_up"
			}
		}
		d.Observe(outcome, attempts)
	}
	return dl.DeliveryID, len(errs) == 0, nil
}

// post sends one delivery to one URL; nil means a 2xx answer.
func (d *Deliverer) post(ctx context.Context, url string, id uuid.UUID, attempt int, body []byte) error {
	req, err := http.NewRequestWithContext(ctx, http.MethodPost, url, bytes.NewReader(body))
	if err != nil {
		return fmt.Errorf("POST %s: %w", url, err)
	}
	req.Header.Set("Content-Type", "application/json")
	req.Header.Set("User-Agent", "rotorwright-webhook")
	req.Header.Set(HeaderIdempotencyKey, id.String())
	req.Header.Set(HeaderDelivery, id.String())
	req.Header.Set(HeaderAttempt, strconv.Itoa(attempt))
	if d.SigningKey != nil {
		// Signed at each attempt, so the timestamp is fresh on a retry.
		now := time.Now()
		req.Header.Set(HeaderWebhookID, id.String())
		req.Header.Set(HeaderWebhookTimestamp, strconv.FormatInt(now.Unix(), 10))
		req.Header.Set(HeaderWebhookSignature, Sign(d.SigningKey, id.String(), now, body))
	}
	resp, err := d.client().Do(req)
	if err != nil {
		return fmt.Errorf("POST %s: %w", url, err)
	}
	defer resp.Body.Close()
	// Read a little so the connection can be reused and the error can say
	// what the receiver complained about.
	snippet, _ := io.ReadAll(io.LimitReader(resp.Body, 200))
	_, _ = io.Copy(io.Discard, io.LimitReader(resp.Body, 64<<10))
	if resp.StatusCode < 200 || resp.StatusCode > 299 {
		return fmt.Errorf("POST %s: status %d: %s", url, resp.StatusCode, strings.TrimSpace(string(snippet)))
	}
	return nil
}

func (d *Deliverer) logger() *slog.Logger {
	if d.Logger != nil {
		return d.Logger
	}
	return slog.Default()
}

// Run delivers every interval until ctx ends; database errors are logged and
// retried on the next pass.
func (d *Deliverer) Run(ctx context.Context, every time.Duration) {
	if every <= 0 {
		every = 10 * time.Second
	}
	t := time.NewTicker(every)
	defer t.Stop()
	for {
		n, f, err := d.DeliverOnce(ctx)
		if err != nil && ctx.Err() == nil {
			d.logger().Error("webhook delivery pass failed", "err", err)
		} else if n+f > 0 {
			d.logger().Info("webhook deliveries", "delivered", n, "failed", f)
		}
		select {
		case <-ctx.Done():
			return
		case <-t.C:
		}
	}
}
