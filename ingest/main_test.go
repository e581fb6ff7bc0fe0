package ingest

import (
	"testing"

	"github.com/rotorwright/rotorwright/internal/pgtest"
	"github.com/rotorwright/rotorwright/migrations"
)

// The repack tests use a real PostgreSQL (one throwaway cluster per test
// binary); the rest of the package's tests need none.
func TestMain(m *testing.M) {
	pgtest.Main(m, migrations.Prepare)
}
