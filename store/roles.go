package store

import (
	"context"
	"fmt"

	"github.com/jackc/pgx/v5"

	"github.com/rotorwright/rotorwright/migrations"
)

// Privileged reports whether the role this store connects as could change
// or remove audit-log rows: it owns the table (and so may disable its
// triggers), is a superuser, or holds UPDATE, DELETE or TRUNCATE on it. The
// service should connect as a member of migrations.ServiceRole, which holds
// none of these.
func (db *DB) Privileged(ctx context.Context) (role string, privileged bool, err error) {
	err = db.pool.QueryRow(ctx, `
		SELECT current_user,
		       (SELECT rolsuper FROM pg_roles WHERE rolname = current_user)
		    OR pg_has_role(c.relowner, 'USAGE')
		    OR has_table_privilege(c.oid, 'UPDATE, DELETE, TRUNCATE')
		FROM pg_class c WHERE c.oid = 'audit_log'::regclass`).Scan(&role, &privileged)
	return role, privileged, err
}

// AllowServiceLogin lets migrations.ServiceRole log in, for a database
// whose socket only the server's own account reaches (the embedded
// cluster), where the service connects as that role without a password.
// It needs a role that may alter roles.
func (db *DB) AllowServiceLogin(ctx context.Context) error {
	var can bool
	err := db.pool.QueryRow(ctx, `SELECT rolcanlogin FROM pg_roles WHERE rolname = $1`, migrations.ServiceRole).Scan(&can)
	if err != nil {
		return fmt.Errorf("role %s: %w", migrations.ServiceRole, err)
	}
	if can {
		return nil
	}
	_, err = db.pool.Exec(ctx, "ALTER ROLE "+pgx.Identifier{migrations.ServiceRole}.Sanitize()+" LOGIN")
	return err
}
