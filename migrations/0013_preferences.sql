-- Preference judging: a project asks either for grades or for preferences between two
-- documents of a query. The documents compared are those whose final grade is at or above
-- the preference threshold (NULL: the top two levels of the scale, whatever the scale is).
ALTER TABLE projects ADD COLUMN task_kind TEXT NOT NULL DEFAULT 'graded' CHECK (task_kind IN ('graded', 'preference'));
ALTER TABLE projects ADD COLUMN preference_threshold INTEGER CHECK (preference_threshold >= 0);

-- The comparisons the schedule has asked for, one row per unordered pair of documents
-- (doc_a < doc_b by id). "open" is set while the schedule waits for it; judged counts its
-- current answers with an outcome, kept in the same transaction as each answer, so no
-- comparison gets more answers than the project's judgments per pair.
CREATE TABLE preference_comparisons (
    id         INTEGER PRIMARY KEY,
    project_id INTEGER NOT NULL REFERENCES projects(id) ON DELETE CASCADE,
    query_id   INTEGER NOT NULL REFERENCES queries(id) ON DELETE CASCADE,
    doc_a      INTEGER NOT NULL REFERENCES documents(id) ON DELETE CASCADE,
    doc_b      INTEGER NOT NULL REFERENCES documents(id) ON DELETE CASCADE,
    open       INTEGER NOT NULL DEFAULT 1 CHECK (open IN (0, 1)),
    judged     INTEGER NOT NULL DEFAULT 0,
    created_at TEXT NOT NULL,
    CHECK (doc_a < doc_b),
    UNIQUE (query_id, doc_a, doc_b)
);
CREATE INDEX preference_comparisons_open ON preference_comparisons(project_id, open, query_id);

-- A comparison held for one assessor, with the placement they are shown: left_doc is the
-- document on the left, drawn at random when the lease is first given.
CREATE TABLE preference_leases (
    comparison_id INTEGER NOT NULL REFERENCES preference_comparisons(id) ON DELETE CASCADE,
    user_id       INTEGER NOT NULL REFERENCES users(id) ON DELETE CASCADE,
    left_doc      INTEGER NOT NULL REFERENCES documents(id) ON DELETE CASCADE,
    leased_at     TEXT NOT NULL,
    expires_at    TEXT NOT NULL,
    PRIMARY KEY (comparison_id, user_id)
) WITHOUT ROWID;
CREATE INDEX preference_leases_user ON preference_leases(user_id);

-- Preference answers are append-only like judgments: undo clears "current" and sets
-- withdrawn_at; the row stays. left_doc and right_doc are as shown to the assessor, and the
-- outcome reads in that orientation. Exactly one of outcome and cannot_judge is set; flagged
-- marks disturbing content seen on the screen, whatever the answer.
CREATE TABLE preference_answers (
    id            INTEGER PRIMARY KEY,
    comparison_id INTEGER NOT NULL REFERENCES preference_comparisons(id) ON DELETE CASCADE,
    user_id       INTEGER NOT NULL REFERENCES users(id),
    left_doc      INTEGER NOT NULL REFERENCES documents(id) ON DELETE CASCADE,
    right_doc     INTEGER NOT NULL REFERENCES documents(id) ON DELETE CASCADE,
    outcome       TEXT CHECK (outcome IN ('left', 'right', 'same', 'neither')),
    cannot_judge  TEXT CHECK (cannot_judge IN ('broken', 'language', 'disturbing', 'other')),
    flagged       INTEGER NOT NULL DEFAULT 0 CHECK (flagged IN (0, 1)),
    note          TEXT NOT NULL DEFAULT '',
    time_spent_ms INTEGER NOT NULL DEFAULT 0 CHECK (time_spent_ms >= 0),
    supersedes    INTEGER REFERENCES preference_answers(id),
    current       INTEGER NOT NULL DEFAULT 1 CHECK (current IN (0, 1)),
    withdrawn_at  TEXT,
    created_at    TEXT NOT NULL,
    CHECK ((outcome IS NULL) <> (cannot_judge IS NULL)),
    CHECK (left_doc <> right_doc)
);
CREATE UNIQUE INDEX preference_answers_one_current ON preference_answers(comparison_id, user_id) WHERE current = 1;
-- An assessor's answers newest first (undo).
CREATE INDEX preference_answers_user ON preference_answers(user_id, id);
