-- The lead's desk: a per-project version that changes with every write that can move a lead's
-- figures, so a computed report can be cached and still never be stale; and indexes for
-- adjudication history.

CREATE TABLE project_versions (
    project_id bigint PRIMARY KEY REFERENCES projects(id) ON DELETE CASCADE,
    version    bigint NOT NULL DEFAULT 0
);

-- Triggers rather than calls in Go: judgments and adjudications are written from several
-- places (judging, undo, import, adjudication), and none of them can forget to bump.
-- One function serves a table's insert, update and delete triggers: PostgreSQL tells it
-- which (TG_OP), and only a delete has no NEW row.
CREATE FUNCTION version_by_pair() RETURNS trigger LANGUAGE plpgsql AS $$
DECLARE
    pair bigint;
BEGIN
    IF TG_OP = 'DELETE' THEN
        pair := OLD.pair_id;
    ELSE
        pair := NEW.pair_id;
    END IF;
    INSERT INTO project_versions(project_id, version)
        SELECT project_id, 1 FROM pairs WHERE id = pair
        ON CONFLICT (project_id) DO UPDATE SET version = project_versions.version + 1;
    RETURN NULL;
END $$;
CREATE TRIGGER judgments_version_insert AFTER INSERT ON judgments
FOR EACH ROW EXECUTE FUNCTION version_by_pair();
CREATE TRIGGER judgments_version_update AFTER UPDATE ON judgments
FOR EACH ROW EXECUTE FUNCTION version_by_pair();
CREATE TRIGGER judgments_version_delete AFTER DELETE ON judgments
FOR EACH ROW EXECUTE FUNCTION version_by_pair();
CREATE TRIGGER adjudications_version_insert AFTER INSERT ON adjudications
FOR EACH ROW EXECUTE FUNCTION version_by_pair();
CREATE TRIGGER adjudications_version_update AFTER UPDATE ON adjudications
FOR EACH ROW EXECUTE FUNCTION version_by_pair();
-- Gold grades, new and removed pairs change gold figures and the queue.
CREATE FUNCTION pairs_version_insert() RETURNS trigger LANGUAGE plpgsql AS $$
BEGIN
    INSERT INTO project_versions(project_id, version) VALUES (NEW.project_id, 1)
        ON CONFLICT (project_id) DO UPDATE SET version = project_versions.version + 1;
    RETURN NULL;
END $$;
CREATE TRIGGER pairs_version_insert AFTER INSERT ON pairs
FOR EACH ROW EXECUTE FUNCTION pairs_version_insert();
-- The insert trigger has a function of its own: bulk imports replace it (0008).
CREATE FUNCTION pairs_version_change() RETURNS trigger LANGUAGE plpgsql AS $$
DECLARE
    project bigint;
BEGIN
    IF TG_OP = 'DELETE' THEN
        project := OLD.project_id;
    ELSE
        project := NEW.project_id;
    END IF;
    INSERT INTO project_versions(project_id, version) VALUES (project, 1)
        ON CONFLICT (project_id) DO UPDATE SET version = project_versions.version + 1;
    RETURN NULL;
END $$;
CREATE TRIGGER pairs_version_update AFTER UPDATE OF gold_grade, query_id, document_id ON pairs
FOR EACH ROW EXECUTE FUNCTION pairs_version_change();
CREATE TRIGGER pairs_version_delete AFTER DELETE ON pairs
FOR EACH ROW EXECUTE FUNCTION pairs_version_change();
-- Usernames name raters in every figure.
CREATE FUNCTION users_version_update() RETURNS trigger LANGUAGE plpgsql AS $$
BEGIN
    UPDATE project_versions SET version = version + 1;
    RETURN NULL;
END $$;
CREATE TRIGGER users_version_update AFTER UPDATE OF username ON users
FOR EACH ROW EXECUTE FUNCTION users_version_update();

CREATE INDEX adjudications_pair ON adjudications(pair_id, id);
CREATE INDEX judgments_pair ON judgments(pair_id, current);
