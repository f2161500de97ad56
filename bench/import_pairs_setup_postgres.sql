-- The pairs import benchmark's starting point, untimed: the rows file's queries and
-- documents (by first appearance, as the rows import writes them) without their pairs, so
-- that a pairs file can then name them. The rows file comes on psql's standard input.
CREATE TEMP TABLE rows (query_id text, query_text text, query_need text, doc_id text, title text,
    url text, body text, body_format text, priority text, lang text, n bigserial);
\copy rows (query_id, query_text, query_need, doc_id, title, url, body, body_format, priority, lang) FROM pstdin WITH (FORMAT csv, HEADER true)
INSERT INTO queries(project_id, external_id, text, need)
    SELECT 1, query_id, query_text, query_need FROM (SELECT DISTINCT ON (query_id) * FROM rows ORDER BY query_id, n) f ORDER BY n;
INSERT INTO documents(project_id, external_id, title, url, body, body_format, metadata)
    SELECT 1, doc_id, title, url, body, body_format, json_build_object('lang', lang)::text
    FROM (SELECT DISTINCT ON (doc_id) * FROM rows ORDER BY doc_id, n) f ORDER BY n;
ANALYZE queries, documents;
