-- Bulk imports, again: 0008 makes the two per-pair insert triggers stand aside while an
-- import holds a bulk_imports row, but PostgreSQL still calls each trigger's function once
-- per inserted pair to find that out, a few seconds of a million-pair import. A trigger's
-- WHEN may not read a table, but it may read a setting: an import sets pertinent.bulk_import
-- to its project's id for its own transaction (set_config(..., true)), and for that project's
-- rows the functions are not called at all. Every other transaction, and the same one once
-- the import has settled its progress, sees the triggers as before. The bulk_imports test
-- in the functions stays, for a writer that inserts pairs under the row alone.
DROP TRIGGER pairs_progress_insert ON pairs;
CREATE TRIGGER pairs_progress_insert AFTER INSERT ON pairs
FOR EACH ROW WHEN (current_setting('pertinent.bulk_import', true) IS DISTINCT FROM CAST(NEW.project_id AS text))
EXECUTE FUNCTION pairs_progress_insert();

DROP TRIGGER pairs_version_insert ON pairs;
CREATE TRIGGER pairs_version_insert AFTER INSERT ON pairs
FOR EACH ROW WHEN (current_setting('pertinent.bulk_import', true) IS DISTINCT FROM CAST(NEW.project_id AS text))
EXECUTE FUNCTION pairs_version_insert();
