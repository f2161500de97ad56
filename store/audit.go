package store

import (
	"context"
	"database/sql"
	"strconv"
)

// audit records an administrative change inside the transaction that makes it, so the record
// and the change stand or fall together.
func audit(ctx context.Context, tx *sql.Tx, actor, projectID int64, action, target, detail string) error {
	_, err := tx.ExecContext(ctx, `INSERT INTO audit_events(at, actor_id, project_id, action, target, detail) VALUES (?, ?, ?, ?, ?, ?)`,
		now(), nullID(actor), nullID(projectID), action, target, detail)
	return err
}

func userRef(id int64) string { return "user:" + strconv.FormatInt(id, 10) }
