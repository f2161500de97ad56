-- The lead's desk is kept current by reading only what changed since it was built: judgments
-- with a higher id (new ones, revisions included) and the judgments that stopped counting,
-- which this log lists. Triggers fill it, so no writer (judging, undo, revision, import) can
-- forget to. kind 0: a judgment stopped being current (superseded or withdrawn); kind 1: a
-- change the desk does not follow row by row (a deleted judgment, whose id may be reused, or
-- an edited one), so the desk is rebuilt from scratch.
CREATE TABLE desk_log (
    seq         INTEGER PRIMARY KEY,
    project_id  INTEGER NOT NULL,
    judgment_id INTEGER NOT NULL,
    kind        INTEGER NOT NULL
);

-- Only the newest 100,000 entries are kept (pruned from the bottom, so seq stays gapless
-- above the lowest entry); a desk older than that is rebuilt from scratch.
CREATE TRIGGER judgments_desk_log_retire AFTER UPDATE OF current ON judgments
WHEN OLD.current = 1 AND NEW.current = 0
BEGIN
    INSERT INTO desk_log(project_id, judgment_id, kind)
        SELECT project_id, OLD.id, 0 FROM pairs WHERE id = OLD.pair_id;
    DELETE FROM desk_log WHERE seq <= (SELECT MAX(seq) FROM desk_log) - 100000;
END;

CREATE TRIGGER judgments_desk_log_revive AFTER UPDATE OF current ON judgments
WHEN OLD.current = 0 AND NEW.current = 1
BEGIN
    INSERT INTO desk_log(project_id, judgment_id, kind)
        SELECT project_id, OLD.id, 1 FROM pairs WHERE id = OLD.pair_id;
END;

CREATE TRIGGER judgments_desk_log_edit AFTER UPDATE OF pair_id, user_id, grade, cannot_judge, time_spent_ms, created_at ON judgments
BEGIN
    INSERT INTO desk_log(project_id, judgment_id, kind)
        SELECT project_id, OLD.id, 1 FROM pairs WHERE id IN (OLD.pair_id, NEW.pair_id);
END;

-- A pair's judgments are deleted with it, after the pair row is gone: project 0 stands for
-- every project.
CREATE TRIGGER judgments_desk_log_delete AFTER DELETE ON judgments
BEGIN
    INSERT INTO desk_log(project_id, judgment_id, kind)
        VALUES (COALESCE((SELECT project_id FROM pairs WHERE id = OLD.pair_id), 0), OLD.id, 1);
END;
