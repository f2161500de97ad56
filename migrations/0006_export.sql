-- Export and evaluation: API tokens are looked up per account on the settings page, and each
-- evaluation of ranker runs is kept so its table can be downloaded and its unjudged top-k sent
-- to judging later without uploading the runs again.

CREATE INDEX api_tokens_user ON api_tokens(user_id);

CREATE TABLE evaluations (
    id         INTEGER PRIMARY KEY,
    project_id INTEGER NOT NULL REFERENCES projects(id) ON DELETE CASCADE,
    user_id    INTEGER REFERENCES users(id),
    created_at TEXT NOT NULL,
    -- The run names, as shown in lists.
    runs       TEXT NOT NULL,
    -- JSON: label policy, options, summaries, comparisons and the unjudged top-k pool.
    result     TEXT NOT NULL
);
CREATE INDEX evaluations_project ON evaluations(project_id, id);
