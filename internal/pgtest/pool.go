package pgtest

import (
	"context"
	"testing"
	"time"

	"github.com/jackc/pgx/v5/pgxpool"
)

// NewPool returns a pool on a new database cloned from the template, closed
// when the test ends.
func NewPool(t testing.TB) *pgxpool.Pool {
	t.Helper()
	u := NewDB(t)
	ctx, cancel := context.WithTimeout(context.Background(), 30*time.Second)
	defer cancel()
	pool, err := pgxpool.New(ctx, u)
	if err != nil {
		t.Fatalf("pgtest: pool: %v", err)
	}
	if err := pool.Ping(ctx); err != nil {
		t.Fatalf("pgtest: ping: %v", err)
	}
	// Registered after the drop, so it runs first.
	t.Cleanup(pool.Close)
	return pool
}
