-- PostgreSQL's twin of this migration lets an import's own transaction skip calling the
-- per-pair insert triggers' functions (postgres/0016_bulk_import_setting.sql). SQLite tests
-- bulk_imports in the triggers' WHEN already (0008), without calling anything, so here there
-- is nothing to change; the file keeps the two sequences number for number.
SELECT 1;
