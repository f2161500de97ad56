-- The calibration round: pairs with a known grade and the reason for it, shown to every new
-- assessor of the project before ordinary work, in the order of position, each followed by
-- its known grade. They are not pairs to judge: answers to them are kept apart from
-- judgments and count towards nothing but the assessor's calibration score.
CREATE TABLE calibration_pairs (
    id          INTEGER PRIMARY KEY,
    project_id  INTEGER NOT NULL REFERENCES projects(id) ON DELETE CASCADE,
    query_id    INTEGER NOT NULL REFERENCES queries(id) ON DELETE CASCADE,
    document_id INTEGER NOT NULL REFERENCES documents(id) ON DELETE CASCADE,
    grade       INTEGER NOT NULL CHECK (grade >= 0),
    reason      TEXT NOT NULL,
    position    INTEGER NOT NULL,
    created_at  TEXT NOT NULL,
    UNIQUE (project_id, query_id, document_id)
);
CREATE INDEX calibration_pairs_order ON calibration_pairs(project_id, position);

-- An assessor's one answer to a calibration pair: a grade, or why they could not judge it.
CREATE TABLE calibration_answers (
    pair_id      INTEGER NOT NULL REFERENCES calibration_pairs(id) ON DELETE CASCADE,
    user_id      INTEGER NOT NULL REFERENCES users(id) ON DELETE CASCADE,
    grade        INTEGER,
    cannot_judge TEXT,
    answered_at  TEXT NOT NULL,
    PRIMARY KEY (pair_id, user_id),
    CHECK ((grade IS NULL) != (cannot_judge IS NULL))
) WITHOUT ROWID;
CREATE INDEX calibration_answers_user ON calibration_answers(user_id);

-- How sure a source was of a grade, in [0, 1], where its file said (a qrels fifth column).
CREATE TABLE source_confidence (
    pair_id    INTEGER NOT NULL REFERENCES pairs(id) ON DELETE CASCADE,
    user_id    INTEGER NOT NULL REFERENCES users(id) ON DELETE CASCADE,
    confidence REAL NOT NULL CHECK (confidence >= 0 AND confidence <= 1),
    PRIMARY KEY (pair_id, user_id)
) WITHOUT ROWID;

-- Pre-labels: which source's grades choose what people judge first, and how ('least_sure':
-- its least confident grades first; 'audit': a random share of its grades first).
CREATE TABLE prelabel_settings (
    project_id INTEGER PRIMARY KEY REFERENCES projects(id) ON DELETE CASCADE,
    source_id  INTEGER NOT NULL REFERENCES users(id) ON DELETE CASCADE,
    mode       TEXT NOT NULL CHECK (mode IN ('least_sure', 'audit')),
    share      REAL NOT NULL CHECK (share > 0 AND share <= 1),
    raised     INTEGER NOT NULL DEFAULT 0,
    updated_at TEXT NOT NULL
);

-- The priority a pre-label setting raised a pair from, so a new setting can put it back.
CREATE TABLE prelabel_raises (
    pair_id  INTEGER PRIMARY KEY REFERENCES pairs(id) ON DELETE CASCADE,
    priority INTEGER NOT NULL
);
