package health_test

import (
	"context"
	"testing"

	"github.com/jackc/pgx/v5"

	"github.com/rotorwright/rotorwright/internal/pgtest"
	"github.com/rotorwright/rotorwright/migrations"
)

func TestMain(m *testing.M) {
	pgtest.Main(m, func(ctx context.Context, url string) error {
		conn, err := pgx.Connect(ctx, url)
		if err != nil {
			return err
		}
		defer conn.Close(ctx)
		return migrations.Migrate(ctx, conn, nil)
	})
}
