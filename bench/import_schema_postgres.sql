-- The PostgreSQL import benchmark's reference: psql's \copy loads the rows file into a
-- temporary table, then plain SQL lays it into pertinent's own schema the way `pertinent
-- import rows` does (queries and documents by first appearance, one pair per row,
-- query_progress counted once), in one transaction. The file comes on psql's standard input.
CREATE TEMP TABLE rows (query_id text, query_text text, query_need text, doc_id text, title text,
    url text, body text, body_format text, priority text, lang text, n bigserial);
\copy rows (query_id, query_text, query_need, doc_id, title, url, body, body_format, priority, lang) FROM pstdin WITH (FORMAT csv, HEADER true)
BEGIN;
INSERT INTO bulk_imports(project_id) VALUES (1);
INSERT INTO queries(project_id, external_id, text, need)
    SELECT 1, query_id, query_text, query_need FROM (SELECT DISTINCT ON (query_id) * FROM rows ORDER BY query_id, n) f ORDER BY n;
INSERT INTO documents(project_id, external_id, title, url, body, body_format, metadata)
    SELECT 1, doc_id, title, url, body, body_format, json_build_object('lang', lang)::text
    FROM (SELECT DISTINCT ON (doc_id) * FROM rows ORDER BY doc_id, n) f ORDER BY n;
ALTER TABLE pairs DISABLE TRIGGER USER; -- query_progress is counted once below, as the import does
INSERT INTO pairs(project_id, query_id, document_id, origin, priority, created_at)
    SELECT 1, q.id, d.id, 'rows', r.priority::bigint, '2026-01-01T00:00:00.000Z'
    FROM rows r
    JOIN queries q ON q.project_id = 1 AND q.external_id = r.query_id
    JOIN documents d ON d.project_id = 1 AND d.external_id = r.doc_id
    ORDER BY r.n;
ALTER TABLE pairs ENABLE TRIGGER USER;
\ir query_progress_postgres.sql
DELETE FROM bulk_imports;
COMMIT;
ANALYZE queries, documents, pairs, query_progress;
