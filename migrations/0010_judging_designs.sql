-- Judging designs: which pairs to judge, chosen from kept runs, and how each pair was chosen,
-- so that estimates can weigh every graded pair by the probability it was chosen with.

-- A run file kept for planning and estimation, compressed (gzip) exactly as it was read.
CREATE TABLE runs (
    id         INTEGER PRIMARY KEY,
    project_id INTEGER NOT NULL REFERENCES projects(id) ON DELETE CASCADE,
    name       TEXT NOT NULL,
    body       BLOB NOT NULL,
    entries    INTEGER NOT NULL,
    queries    INTEGER NOT NULL,
    user_id    INTEGER REFERENCES users(id),
    created_at TEXT NOT NULL,
    UNIQUE (project_id, name)
);

-- One judging design: its kind, its settings (JSON) and the runs it was made from (JSON ids).
CREATE TABLE designs (
    id         INTEGER PRIMARY KEY,
    project_id INTEGER NOT NULL REFERENCES projects(id) ON DELETE CASCADE,
    kind       TEXT NOT NULL CHECK (kind IN ('depth', 'stratified', 'decide', 'find')),
    settings   TEXT NOT NULL,
    runs       TEXT NOT NULL,
    user_id    INTEGER REFERENCES users(id),
    created_at TEXT NOT NULL
);
CREATE INDEX designs_project ON designs(project_id, id);

-- How a design chose a pair: its stratum (0 judged in full, 1.. sampled, -1 adaptive), the
-- rate it was offered at, and why. A pair's inclusion probability is the largest rate any design
-- offered it: each pair draws against one permanent random number, so designs nest.
-- Keyed by pair, so later imports (which update pairs in place) keep it.
CREATE TABLE pair_choices (
    pair_id   INTEGER NOT NULL REFERENCES pairs(id) ON DELETE CASCADE,
    design_id INTEGER NOT NULL REFERENCES designs(id) ON DELETE CASCADE,
    stratum   INTEGER NOT NULL,
    rate      REAL NOT NULL CHECK (rate > 0 AND rate <= 1),
    reason    TEXT NOT NULL,
    PRIMARY KEY (pair_id, design_id)
) WITHOUT ROWID;
CREATE INDEX pair_choices_design ON pair_choices(design_id);
