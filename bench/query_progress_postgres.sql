-- The PostgreSQL import references' last step, as the import settles it: query_progress
-- counted once from the project's pairs (\ir from import_schema_postgres.sql and
-- import_pairs_postgres.sql, inside their transactions).
INSERT INTO query_progress(query_id, project_id, pairs, judged, top_priority)
    SELECT query_id, 1, COUNT(*), 0, MAX(priority) FROM pairs WHERE project_id = 1 GROUP BY query_id
    ON CONFLICT (query_id) DO UPDATE SET pairs = excluded.pairs, judged = excluded.judged,
        top_priority = excluded.top_priority;
