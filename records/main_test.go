package records_test

import (
	"testing"

	"github.com/rotorwright/rotorwright/internal/pgtest"
	"github.com/rotorwright/rotorwright/migrations"
)

func TestMain(m *testing.M) { pgtest.Main(m, migrations.Prepare) }
