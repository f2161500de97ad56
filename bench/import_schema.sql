-- The import benchmark's second reference: the sqlite3 shell (native SQLite) loads the same
-- rows file into pertinent's own schema, in one transaction with foreign keys on, the way
-- `pertinent import rows` lays it out (queries and documents by first appearance, one pair
-- per row, query_progress recounted once). It shows what the schema's indexes and checks
-- cost on their own, without pertinent's parsing and validation or the Go SQLite driver.
-- The file to read is bound by the caller as `.import --csv --schema temp <file> rows` before this.
PRAGMA foreign_keys = ON;
BEGIN;
INSERT INTO bulk_imports(project_id) VALUES (1);
INSERT INTO queries(project_id, external_id, text, need)
    SELECT 1, query_id, query_text, query_need FROM temp.rows
    WHERE rowid IN (SELECT min(rowid) FROM temp.rows GROUP BY query_id) ORDER BY rowid;
INSERT INTO documents(project_id, external_id, title, url, body, body_format, metadata)
    SELECT 1, doc_id, title, url, body, body_format, json_object('lang', lang) FROM temp.rows
    WHERE rowid IN (SELECT min(rowid) FROM temp.rows GROUP BY doc_id) ORDER BY rowid;
INSERT INTO pairs(project_id, query_id, document_id, origin, priority, created_at)
    SELECT 1, q.id, d.id, 'rows', CAST(r.priority AS INTEGER), '2026-01-01T00:00:00.000Z'
    FROM temp.rows r
    JOIN queries q ON q.project_id = 1 AND q.external_id = r.query_id
    JOIN documents d ON d.project_id = 1 AND d.external_id = r.doc_id
    ORDER BY r.rowid;
INSERT INTO query_progress(query_id, project_id, pairs, judged, top_priority)
    SELECT query_id, 1, COUNT(*), 0, MAX(priority) FROM pairs WHERE project_id = 1 GROUP BY query_id
    ON CONFLICT (query_id) DO UPDATE SET pairs = excluded.pairs, judged = excluded.judged,
        top_priority = excluded.top_priority;
DELETE FROM bulk_imports;
COMMIT;
