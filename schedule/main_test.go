package schedule_test

import (
	"context"
	"testing"
	"time"

	"github.com/jackc/pgx/v5/pgxpool"

	"github.com/rotorwright/rotorwright/internal/pgtest"
	"github.com/rotorwright/rotorwright/migrations"
)

func TestMain(m *testing.M) {
	pgtest.Main(m, migrations.Prepare)
}

// replicaPools returns n pools on one fresh database, standing in for n
// replicas of the service.
func replicaPools(t *testing.T, n int) []*pgxpool.Pool {
	t.Helper()
	url := pgtest.NewDB(t)
	ctx, cancel := context.WithTimeout(context.Background(), 30*time.Second)
	defer cancel()
	pools := make([]*pgxpool.Pool, n)
	for i := range pools {
		p, err := pgxpool.New(ctx, url)
		if err != nil {
			t.Fatal(err)
		}
		t.Cleanup(p.Close)
		pools[i] = p
	}
	return pools
}
