-- The pairs import benchmark's reference: psql's \copy loads the pairs file into a temporary
-- table, then plain SQL lays it into pertinent's schema the way `pertinent import pairs`
-- does (each pair joined to its query and document by external id, query_progress counted
-- once), in one transaction. The file comes on psql's standard input.
CREATE TEMP TABLE given (query_id text, doc_id text, priority bigint, n bigserial);
\copy given (query_id, doc_id, priority) FROM pstdin WITH (FORMAT csv, HEADER true)
BEGIN;
INSERT INTO bulk_imports(project_id) VALUES (1);
ALTER TABLE pairs DISABLE TRIGGER USER; -- query_progress is counted once below, as the import does
INSERT INTO pairs(project_id, query_id, document_id, origin, priority, created_at)
    SELECT 1, q.id, d.id, 'pairs', g.priority, '2026-01-01T00:00:00.000Z'
    FROM given g
    JOIN queries q ON q.project_id = 1 AND q.external_id = g.query_id
    JOIN documents d ON d.project_id = 1 AND d.external_id = g.doc_id
    ORDER BY g.n;
ALTER TABLE pairs ENABLE TRIGGER USER;
\ir query_progress_postgres.sql
DELETE FROM bulk_imports;
COMMIT;
ANALYZE pairs, query_progress;
