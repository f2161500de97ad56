-- Judging at scale: per-query progress kept by triggers, each assessor's current batch, and
-- the indexes the assignment engine, undo and the flagged-pairs list search by.
-- SQLite's trigger bodies become PL/pgSQL functions of the same name, one per trigger.

-- One row per query: how many of its pairs (gold pairs excluded) there are, how many current
-- judgments they hold, and the highest priority among them. Triggers on pairs keep it in the
-- same transaction as every change, so picking the least-covered query is an index walk
-- instead of an aggregate over every pair of the project.
CREATE TABLE query_progress (
    query_id     bigint PRIMARY KEY REFERENCES queries(id) ON DELETE CASCADE,
    project_id   bigint NOT NULL REFERENCES projects(id) ON DELETE CASCADE,
    pairs        bigint NOT NULL DEFAULT 0,
    judged       bigint NOT NULL DEFAULT 0,
    top_priority bigint NOT NULL DEFAULT 0,
    -- Judgments per pair so far: queries of different sizes compare fairly. STORED, since
    -- PostgreSQL 15 has no virtual generated columns; the index below stores it anyway.
    coverage     double precision GENERATED ALWAYS AS (CASE WHEN pairs > 0 THEN CAST(judged AS double precision) / pairs ELSE 0 END) STORED
);
CREATE INDEX query_progress_order ON query_progress(project_id, top_priority DESC, coverage, query_id);
CREATE INDEX query_progress_totals ON query_progress(project_id, pairs, judged);

INSERT INTO query_progress(query_id, project_id, pairs, judged, top_priority)
SELECT q.id, q.project_id,
    (SELECT COUNT(*) FROM pairs p WHERE p.query_id = q.id AND p.gold_grade IS NULL),
    (SELECT COALESCE(SUM(p.judged), 0) FROM pairs p WHERE p.query_id = q.id AND p.gold_grade IS NULL),
    (SELECT COALESCE(MAX(p.priority), 0) FROM pairs p WHERE p.query_id = q.id AND p.gold_grade IS NULL)
FROM queries q;

CREATE FUNCTION pairs_progress_insert() RETURNS trigger LANGUAGE plpgsql AS $$
BEGIN
    INSERT INTO query_progress(query_id, project_id)
        SELECT NEW.query_id, NEW.project_id WHERE NOT EXISTS (SELECT 1 FROM query_progress WHERE query_id = NEW.query_id);
    UPDATE query_progress SET pairs = pairs + 1, judged = judged + NEW.judged,
        top_priority = CASE WHEN pairs = 0 THEN NEW.priority ELSE GREATEST(top_priority, NEW.priority) END
    WHERE query_id = NEW.query_id AND NEW.gold_grade IS NULL;
    RETURN NULL;
END $$;
CREATE TRIGGER pairs_progress_insert AFTER INSERT ON pairs
FOR EACH ROW EXECUTE FUNCTION pairs_progress_insert();

-- The hot path: a judgment added or withdrawn changes only pairs.judged.
CREATE FUNCTION pairs_progress_judged() RETURNS trigger LANGUAGE plpgsql AS $$
BEGIN
    UPDATE query_progress SET judged = judged + NEW.judged - OLD.judged WHERE query_id = NEW.query_id;
    RETURN NULL;
END $$;
CREATE TRIGGER pairs_progress_judged AFTER UPDATE OF judged ON pairs
FOR EACH ROW
WHEN (NEW.gold_grade IS NULL AND OLD.gold_grade IS NULL AND NEW.query_id = OLD.query_id AND NEW.priority = OLD.priority)
EXECUTE FUNCTION pairs_progress_judged();

-- Rarer changes (a pair made gold, re-prioritised or moved) recount the queries involved.
CREATE FUNCTION pairs_progress_reshape() RETURNS trigger LANGUAGE plpgsql AS $$
BEGIN
    INSERT INTO query_progress(query_id, project_id)
        SELECT NEW.query_id, NEW.project_id WHERE NOT EXISTS (SELECT 1 FROM query_progress WHERE query_id = NEW.query_id);
    UPDATE query_progress SET
        pairs = (SELECT COUNT(*) FROM pairs p WHERE p.query_id = query_progress.query_id AND p.gold_grade IS NULL),
        judged = (SELECT COALESCE(SUM(p.judged), 0) FROM pairs p WHERE p.query_id = query_progress.query_id AND p.gold_grade IS NULL),
        top_priority = (SELECT COALESCE(MAX(p.priority), 0) FROM pairs p WHERE p.query_id = query_progress.query_id AND p.gold_grade IS NULL)
    WHERE query_id IN (OLD.query_id, NEW.query_id);
    RETURN NULL;
END $$;
CREATE TRIGGER pairs_progress_reshape AFTER UPDATE OF gold_grade, priority, query_id ON pairs
FOR EACH ROW
WHEN (NOT (OLD.gold_grade IS NOT DISTINCT FROM NEW.gold_grade AND OLD.priority = NEW.priority AND OLD.query_id = NEW.query_id))
EXECUTE FUNCTION pairs_progress_reshape();

CREATE FUNCTION pairs_progress_delete() RETURNS trigger LANGUAGE plpgsql AS $$
BEGIN
    UPDATE query_progress SET pairs = pairs - 1, judged = judged - OLD.judged,
        top_priority = CASE WHEN OLD.priority < top_priority THEN top_priority
            ELSE (SELECT COALESCE(MAX(p.priority), 0) FROM pairs p WHERE p.query_id = OLD.query_id AND p.gold_grade IS NULL) END
    WHERE query_id = OLD.query_id;
    RETURN NULL;
END $$;
CREATE TRIGGER pairs_progress_delete AFTER DELETE ON pairs
FOR EACH ROW
WHEN (OLD.gold_grade IS NULL)
EXECUTE FUNCTION pairs_progress_delete();

-- The query an assessor is working through: they stay on it until its open pairs run out for
-- them, since graded judgments are more consistent when a query's candidates are seen together.
CREATE TABLE batches (
    project_id bigint NOT NULL REFERENCES projects(id) ON DELETE CASCADE,
    user_id    bigint NOT NULL REFERENCES users(id) ON DELETE CASCADE,
    query_id   bigint NOT NULL REFERENCES queries(id) ON DELETE CASCADE,
    started_at text NOT NULL,
    PRIMARY KEY (project_id, user_id)
);

-- An assessor's judgments newest first (undo, My work) without sorting them all.
CREATE INDEX judgments_user_latest ON judgments(user_id, id);
-- Any judgment of a pair by a user, withdrawn or superseded too (gold pairs are served to an
-- assessor once); also spares a scan of all judgments when pairs are deleted.
CREATE INDEX judgments_pair_user ON judgments(pair_id, user_id);
-- Pairs flagged "cannot judge", for the leads' list.
CREATE INDEX judgments_flagged ON judgments(cannot_judge, pair_id) WHERE current = 1 AND cannot_judge IS NOT NULL;
-- Gold pairs of a project, few among many.
CREATE INDEX pairs_gold ON pairs(project_id) WHERE gold_grade IS NOT NULL;
