package store

// An import holds a bulk_imports row for its project inside its transaction (migration
// 0008): the per-pair triggers on pairs that keep query_progress and project_versions stand
// aside, and settleProgress does their work once, set-based, before the import commits. On
// PostgreSQL the import also sets pertinent.bulk_import for its transaction, which the
// triggers' WHEN reads, so their functions are not even called (migration 0016).
const (
	beginBulkImport         = `INSERT INTO bulk_imports(project_id) VALUES (?)`
	endBulkImport           = `DELETE FROM bulk_imports WHERE project_id = ?`
	postgresBeginBulkImport = `SELECT set_config('pertinent.bulk_import', CAST(CAST(?1 AS bigint) AS text), true)`
	postgresEndBulkImport   = `SELECT set_config('pertinent.bulk_import', '', true)`
	// Pairs above maxPair are the ones this import added. Their queries are recounted from
	// scratch, exactly as the trigger that reshapes a query does, so pairs that the same
	// import added and then updated are counted once.
	recountImportedQueries = `INSERT INTO query_progress(query_id, project_id, pairs, judged, top_priority)
		SELECT p.query_id, p.project_id, COUNT(*) FILTER (WHERE p.gold_grade IS NULL),
			COALESCE(SUM(p.judged) FILTER (WHERE p.gold_grade IS NULL), 0),
			COALESCE(MAX(p.priority) FILTER (WHERE p.gold_grade IS NULL), 0)
		FROM pairs p
		WHERE p.query_id IN (SELECT query_id FROM pairs WHERE id > ?1 AND project_id = ?2)
		GROUP BY p.query_id, p.project_id
		ON CONFLICT (query_id) DO UPDATE SET pairs = excluded.pairs, judged = excluded.judged,
			top_priority = excluded.top_priority`
	bumpImportedVersion = `INSERT INTO project_versions(project_id, version)
		SELECT ?2, 1 WHERE EXISTS (SELECT 1 FROM pairs WHERE id > ?1 AND project_id = ?2)
		ON CONFLICT (project_id) DO UPDATE SET version = project_versions.version + 1`
)

// beginProgress makes the pair triggers stand aside for this import's project.
func (im *importer) beginProgress() error {
	if im.pg {
		if _, err := im.tx.ExecContext(im.ctx, postgresBeginBulkImport, im.project); err != nil {
			return err
		}
	}
	_, err := im.tx.ExecContext(im.ctx, beginBulkImport, im.project)
	return err
}

// settleProgress brings query_progress and project_versions up to date with the pairs this
// import added and puts the triggers back in force.
func (im *importer) settleProgress() error {
	if _, err := im.tx.ExecContext(im.ctx, recountImportedQueries, im.maxPair, im.project); err != nil {
		return err
	}
	if _, err := im.tx.ExecContext(im.ctx, bumpImportedVersion, im.maxPair, im.project); err != nil {
		return err
	}
	if im.pg {
		if _, err := im.tx.ExecContext(im.ctx, postgresEndBulkImport); err != nil {
			return err
		}
	}
	_, err := im.tx.ExecContext(im.ctx, endBulkImport, im.project)
	return err
}
