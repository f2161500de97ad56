-- The lead's desk: a per-project version that changes with every write that can move a lead's
-- figures, so a computed report can be cached and still never be stale; and indexes for
-- adjudication history.

CREATE TABLE project_versions (
    project_id INTEGER PRIMARY KEY REFERENCES projects(id) ON DELETE CASCADE,
    version    INTEGER NOT NULL DEFAULT 0
);

-- Triggers rather than calls in Go: judgments and adjudications are written from several
-- places (judging, undo, import, adjudication), and none of them can forget to bump.
CREATE TRIGGER judgments_version_insert AFTER INSERT ON judgments BEGIN
    INSERT INTO project_versions(project_id, version)
        SELECT project_id, 1 FROM pairs WHERE id = NEW.pair_id
        ON CONFLICT (project_id) DO UPDATE SET version = version + 1;
END;
CREATE TRIGGER judgments_version_update AFTER UPDATE ON judgments BEGIN
    INSERT INTO project_versions(project_id, version)
        SELECT project_id, 1 FROM pairs WHERE id = NEW.pair_id
        ON CONFLICT (project_id) DO UPDATE SET version = version + 1;
END;
CREATE TRIGGER judgments_version_delete AFTER DELETE ON judgments BEGIN
    INSERT INTO project_versions(project_id, version)
        SELECT project_id, 1 FROM pairs WHERE id = OLD.pair_id
        ON CONFLICT (project_id) DO UPDATE SET version = version + 1;
END;
CREATE TRIGGER adjudications_version_insert AFTER INSERT ON adjudications BEGIN
    INSERT INTO project_versions(project_id, version)
        SELECT project_id, 1 FROM pairs WHERE id = NEW.pair_id
        ON CONFLICT (project_id) DO UPDATE SET version = version + 1;
END;
CREATE TRIGGER adjudications_version_update AFTER UPDATE ON adjudications BEGIN
    INSERT INTO project_versions(project_id, version)
        SELECT project_id, 1 FROM pairs WHERE id = NEW.pair_id
        ON CONFLICT (project_id) DO UPDATE SET version = version + 1;
END;
-- Gold grades, new and removed pairs change gold figures and the queue.
CREATE TRIGGER pairs_version_insert AFTER INSERT ON pairs BEGIN
    INSERT INTO project_versions(project_id, version) VALUES (NEW.project_id, 1)
        ON CONFLICT (project_id) DO UPDATE SET version = version + 1;
END;
CREATE TRIGGER pairs_version_update AFTER UPDATE OF gold_grade, query_id, document_id ON pairs BEGIN
    INSERT INTO project_versions(project_id, version) VALUES (NEW.project_id, 1)
        ON CONFLICT (project_id) DO UPDATE SET version = version + 1;
END;
CREATE TRIGGER pairs_version_delete AFTER DELETE ON pairs BEGIN
    INSERT INTO project_versions(project_id, version) VALUES (OLD.project_id, 1)
        ON CONFLICT (project_id) DO UPDATE SET version = version + 1;
END;
-- Usernames name raters in every figure.
CREATE TRIGGER users_version_update AFTER UPDATE OF username ON users BEGIN
    UPDATE project_versions SET version = version + 1;
END;

CREATE INDEX adjudications_pair ON adjudications(pair_id, id);
CREATE INDEX judgments_pair ON judgments(pair_id, current);
