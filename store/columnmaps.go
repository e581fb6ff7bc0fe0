package store

import (
	"context"
	"encoding/json"
	"errors"
	"fmt"

	"github.com/jackc/pgx/v5"
	"github.com/jackc/pgx/v5/pgconn"

	"github.com/rotorwright/rotorwright/fleet"
)

// mapBody is what a column map holds besides its name and record fields.
type mapBody struct {
	Delimiter string           `json:"delimiter"`
	HeaderRow int              `json:"header_row"`
	Time      fleet.MapTime    `json:"time"`
	Columns   fleet.MapColumns `json:"columns"`
	Detect    []string         `json:"detect"`
}

func bodyOf(m *fleet.ColumnMap) mapBody {
	return mapBody{Delimiter: m.Delimiter, HeaderRow: m.HeaderRow, Time: m.Time, Columns: m.Columns, Detect: m.Detect}
}

func (b *mapBody) onto(m *fleet.ColumnMap) {
	m.Delimiter, m.HeaderRow, m.Time, m.Columns, m.Detect = b.Delimiter, b.HeaderRow, b.Time, b.Columns, b.Detect
}

const mapCols = `id, name, version, body, created_at, updated_at`

func scanMap(row pgx.Row) (*fleet.ColumnMap, error) {
	var m fleet.ColumnMap
	var raw []byte
	if err := row.Scan(&m.ID, &m.Name, &m.Version, &raw, &m.CreatedAt, &m.UpdatedAt); err != nil {
		return nil, err
	}
	var b mapBody
	if err := json.Unmarshal(raw, &b); err != nil {
		return nil, fmt.Errorf("column map %s: stored body: %w", m.ID, err)
	}
	b.onto(&m)
	return &m, nil
}

// CreateColumnMap validates and stores a new column map as its version 1.
// A map that auto-detection could not tell from another is refused
// (unprocessable, naming detect and the other map).
func (db *DB) CreateColumnMap(ctx context.Context, m *fleet.ColumnMap) (*fleet.ColumnMap, error) {
	if err := m.Validate(); err != nil {
		return nil, err
	}
	var out *fleet.ColumnMap
	err := db.inTx(ctx, func(tx pgx.Tx) error {
		if err := checkDetectClash(ctx, tx, m, ""); err != nil {
			return err
		}
		body, err := json.Marshal(bodyOf(m))
		if err != nil {
			return err
		}
		out, err = scanMap(tx.QueryRow(ctx, `
			INSERT INTO column_maps (id, name, body) VALUES ($1, $2, $3) RETURNING `+mapCols, newID(), m.Name, body))
		if err != nil {
			return err
		}
		if err := saveMapVersion(ctx, tx, out, body); err != nil {
			return err
		}
		return audit(ctx, tx, "column_map", out.ID, nil, out)
	})
	return out, err
}

// checkDetectClash refuses m when auto-detection could not tell it from
// another map. Map writes are serialised by an advisory lock so two
// clashing maps cannot pass the check side by side (no constraint can say
// this).
func checkDetectClash(ctx context.Context, tx pgx.Tx, m *fleet.ColumnMap, id string) error {
	if _, err := tx.Exec(ctx, `SELECT pg_advisory_xact_lock(hashtextextended('column_maps', 0))`); err != nil {
		return err
	}
	if len(m.Detect) == 0 {
		return nil
	}
	rows, err := tx.Query(ctx, `SELECT `+mapCols+` FROM column_maps WHERE id IS DISTINCT FROM $1::uuid ORDER BY name`, nilIfEmpty(id))
	if err != nil {
		return err
	}
	others, err := collect(rows, scanMap)
	if err != nil {
		return err
	}
	for _, o := range others {
		if m.DetectClash(o) {
			return &fleet.Error{Code: fleet.EUNPROCESSABLE, Field: "detect", Message: fmt.Sprintf(
				"auto-detection could not tell this map from %q: a log laid out for one of them holds every detect name of the other; add a detect name only this layout has", o.Name)}
		}
	}
	return nil
}

func saveMapVersion(ctx context.Context, tx pgx.Tx, m *fleet.ColumnMap, body []byte) error {
	_, err := tx.Exec(ctx, `INSERT INTO column_map_versions (map_id, version, name, body) VALUES ($1, $2, $3, $4)`,
		m.ID, m.Version, m.Name, body)
	return err
}

// ColumnMap returns the current version of a map.
func (db *DB) ColumnMap(ctx context.Context, id string) (*fleet.ColumnMap, error) {
	m, err := scanMap(db.pool.QueryRow(ctx, `SELECT `+mapCols+` FROM column_maps WHERE id = $1`, id))
	if err != nil {
		return nil, translateNotFound(err, "column map")
	}
	return m, nil
}

// ColumnMapVersion returns a map as it was at a version.
func (db *DB) ColumnMapVersion(ctx context.Context, id string, version int) (*fleet.ColumnMap, error) {
	m, err := scanMap(db.pool.QueryRow(ctx, `
		SELECT m.id, v.name, v.version, v.body, m.created_at, v.saved_at
		FROM column_map_versions v JOIN column_maps m ON m.id = v.map_id
		WHERE v.map_id = $1 AND v.version = $2`, id, version))
	if err != nil {
		return nil, translateNotFound(err, "column map version")
	}
	return m, nil
}

// ColumnMapByRef returns the current version of the map with this id or name.
func (db *DB) ColumnMapByRef(ctx context.Context, ref string) (*fleet.ColumnMap, error) {
	var m *fleet.ColumnMap
	var err error
	if id, perr := ParseID("column_map", ref); perr == nil {
		m, err = scanMap(db.pool.QueryRow(ctx, `SELECT `+mapCols+` FROM column_maps WHERE id = $1`, id))
	} else {
		m, err = scanMap(db.pool.QueryRow(ctx, `SELECT `+mapCols+` FROM column_maps WHERE name = $1`, ref))
	}
	if err != nil {
		return nil, translateNotFound(err, "column map")
	}
	return m, nil
}

// ColumnMaps lists every map by name (a firm has a handful).
func (db *DB) ColumnMaps(ctx context.Context) ([]*fleet.ColumnMap, error) {
	rows, err := db.pool.Query(ctx, `SELECT `+mapCols+` FROM column_maps ORDER BY name`)
	if err != nil {
		return nil, translate(err)
	}
	return collect(rows, scanMap)
}

// UpdateColumnMap applies fn to the map at version under a row lock and
// saves the result as the next version.
func (db *DB) UpdateColumnMap(ctx context.Context, id string, version int, fn func(*fleet.ColumnMap) error) (*fleet.ColumnMap, error) {
	var out *fleet.ColumnMap
	err := db.inTx(ctx, func(tx pgx.Tx) error {
		before, err := scanMap(tx.QueryRow(ctx, `SELECT `+mapCols+` FROM column_maps WHERE id = $1 FOR UPDATE`, id))
		if err != nil {
			return translateNotFound(err, "column map")
		}
		if before.Version != version {
			return versionMismatch()
		}
		m := clone(before)
		if err := fn(m); err != nil {
			return err
		}
		if err := m.Validate(); err != nil {
			return err
		}
		if err := checkDetectClash(ctx, tx, m, id); err != nil {
			return err
		}
		body, err := json.Marshal(bodyOf(m))
		if err != nil {
			return err
		}
		out, err = scanMap(tx.QueryRow(ctx, `
			UPDATE column_maps SET name = $2, body = $3, version = version + 1, updated_at = now()
			WHERE id = $1 RETURNING `+mapCols, id, m.Name, body))
		if err != nil {
			return err
		}
		if err := saveMapVersion(ctx, tx, out, body); err != nil {
			return err
		}
		return audit(ctx, tx, "column_map", id, before, out)
	})
	return out, err
}

// DeleteColumnMap removes a map no flight was read through; a map that
// flights refer to stays (their logs are re-read through it).
func (db *DB) DeleteColumnMap(ctx context.Context, id string, version int) error {
	err := db.inTx(ctx, func(tx pgx.Tx) error {
		before, err := scanMap(tx.QueryRow(ctx, `SELECT `+mapCols+` FROM column_maps WHERE id = $1 FOR UPDATE`, id))
		if err != nil {
			return translateNotFound(err, "column map")
		}
		if before.Version != version {
			return versionMismatch()
		}
		_, err = tx.Exec(ctx, `DELETE FROM column_maps WHERE id = $1`, id)
		var pe *pgconn.PgError
		if errors.As(err, &pe) && pe.ConstraintName == "flight_logs_column_map_fkey" {
			return &fleet.Error{Code: fleet.ECONFLICT, Field: "id",
				Message: "flights were read through this map and are re-read through it; it cannot be deleted (change it instead: flights keep the version they used)"}
		} else if err != nil {
			return err
		}
		return audit(ctx, tx, "column_map", id, before, nil)
	})
	return err
}
