-- The first schema: everything the product stores, shaped for the later features
-- (assignment, adjudication, imports with provenance, features, audit, API tokens).
-- Times are UTC text in RFC 3339 with milliseconds, so they sort as strings.

CREATE TABLE settings (
    key   TEXT PRIMARY KEY,
    value BLOB NOT NULL
);

CREATE TABLE users (
    id            INTEGER PRIMARY KEY,
    username      TEXT NOT NULL UNIQUE COLLATE NOCASE,
    display_name  TEXT NOT NULL DEFAULT '',
    -- 'source' marks a named external origin of judgments (an imported qrels file): never signs in.
    role          TEXT NOT NULL CHECK (role IN ('admin', 'lead', 'assessor', 'source')),
    password_hash TEXT NOT NULL DEFAULT '',
    disabled_at   TEXT,
    created_at    TEXT NOT NULL
);

-- Server-side sessions: the cookie carries only a random token; signing out or disabling an
-- account deletes rows here, which ends the session at once.
CREATE TABLE sessions (
    token_hash BLOB PRIMARY KEY,
    user_id    INTEGER NOT NULL REFERENCES users(id) ON DELETE CASCADE,
    created_at TEXT NOT NULL,
    expires_at TEXT NOT NULL
) WITHOUT ROWID;
CREATE INDEX sessions_user ON sessions(user_id);

CREATE TABLE password_links (
    token_hash BLOB PRIMARY KEY,
    user_id    INTEGER NOT NULL REFERENCES users(id) ON DELETE CASCADE,
    created_by INTEGER REFERENCES users(id),
    created_at TEXT NOT NULL,
    expires_at TEXT NOT NULL,
    used_at    TEXT
) WITHOUT ROWID;

CREATE TABLE api_tokens (
    id           INTEGER PRIMARY KEY,
    user_id      INTEGER NOT NULL REFERENCES users(id) ON DELETE CASCADE,
    name         TEXT NOT NULL,
    token_hash   BLOB NOT NULL UNIQUE,
    created_at   TEXT NOT NULL,
    last_used_at TEXT,
    revoked_at   TEXT
);

CREATE TABLE projects (
    id                 INTEGER PRIMARY KEY,
    name               TEXT NOT NULL UNIQUE,
    description        TEXT NOT NULL DEFAULT '',
    judgments_per_pair INTEGER NOT NULL DEFAULT 3 CHECK (judgments_per_pair >= 1),
    gold_rate          REAL NOT NULL DEFAULT 0 CHECK (gold_rate >= 0 AND gold_rate <= 1),
    lease_seconds      INTEGER NOT NULL DEFAULT 600 CHECK (lease_seconds >= 10),
    allow_changes      INTEGER NOT NULL DEFAULT 1,
    archived_at        TEXT,
    created_at         TEXT NOT NULL
);

-- One row per grade of a project's scale: 0 = not relevant up to the top level.
CREATE TABLE scale_levels (
    project_id  INTEGER NOT NULL REFERENCES projects(id) ON DELETE CASCADE,
    grade       INTEGER NOT NULL CHECK (grade >= 0),
    label       TEXT NOT NULL,
    description TEXT NOT NULL DEFAULT '',
    PRIMARY KEY (project_id, grade)
) WITHOUT ROWID;

-- Guidelines are versioned: the newest revision is current; judgments point at the one in force.
CREATE TABLE guideline_revisions (
    id         INTEGER PRIMARY KEY,
    project_id INTEGER NOT NULL REFERENCES projects(id) ON DELETE CASCADE,
    body       TEXT NOT NULL,
    created_by INTEGER REFERENCES users(id),
    created_at TEXT NOT NULL
);
CREATE INDEX guideline_revisions_project ON guideline_revisions(project_id, id);

CREATE TABLE project_members (
    project_id INTEGER NOT NULL REFERENCES projects(id) ON DELETE CASCADE,
    user_id    INTEGER NOT NULL REFERENCES users(id) ON DELETE CASCADE,
    role       TEXT NOT NULL CHECK (role IN ('lead', 'assessor')),
    added_at   TEXT NOT NULL,
    PRIMARY KEY (project_id, user_id)
) WITHOUT ROWID;
CREATE INDEX project_members_user ON project_members(user_id);

CREATE TABLE queries (
    id          INTEGER PRIMARY KEY,
    project_id  INTEGER NOT NULL REFERENCES projects(id) ON DELETE CASCADE,
    external_id TEXT NOT NULL,
    text        TEXT NOT NULL,
    need        TEXT NOT NULL DEFAULT '',
    UNIQUE (project_id, external_id)
);

CREATE TABLE documents (
    id          INTEGER PRIMARY KEY,
    project_id  INTEGER NOT NULL REFERENCES projects(id) ON DELETE CASCADE,
    external_id TEXT NOT NULL,
    title       TEXT NOT NULL DEFAULT '',
    url         TEXT NOT NULL DEFAULT '',
    body        TEXT NOT NULL DEFAULT '',
    body_format TEXT NOT NULL DEFAULT 'text' CHECK (body_format IN ('text', 'html')),
    metadata    TEXT NOT NULL DEFAULT '{}',
    UNIQUE (project_id, external_id)
);

CREATE TABLE pairs (
    id          INTEGER PRIMARY KEY,
    project_id  INTEGER NOT NULL REFERENCES projects(id) ON DELETE CASCADE,
    query_id    INTEGER NOT NULL REFERENCES queries(id) ON DELETE CASCADE,
    document_id INTEGER NOT NULL REFERENCES documents(id) ON DELETE CASCADE,
    origin      TEXT NOT NULL DEFAULT '',
    priority    INTEGER NOT NULL DEFAULT 0,
    -- A known-answer grade makes this a gold pair.
    gold_grade  INTEGER,
    -- Current judgments by people, kept by the store in the same transaction as each judgment,
    -- so the assignment engine can find open pairs without counting.
    judged      INTEGER NOT NULL DEFAULT 0,
    created_at  TEXT NOT NULL,
    UNIQUE (project_id, query_id, document_id)
);
CREATE INDEX pairs_open ON pairs(project_id, judged, priority);
CREATE INDEX pairs_query ON pairs(query_id);

-- Which runs put a pair into the pool, and at which rank.
CREATE TABLE pair_sources (
    pair_id INTEGER NOT NULL REFERENCES pairs(id) ON DELETE CASCADE,
    run     TEXT NOT NULL,
    rank    INTEGER NOT NULL,
    PRIMARY KEY (pair_id, run)
) WITHOUT ROWID;

CREATE TABLE feature_names (
    project_id INTEGER NOT NULL REFERENCES projects(id) ON DELETE CASCADE,
    idx        INTEGER NOT NULL CHECK (idx >= 1),
    name       TEXT NOT NULL,
    PRIMARY KEY (project_id, idx)
) WITHOUT ROWID;

CREATE TABLE pair_features (
    pair_id INTEGER PRIMARY KEY REFERENCES pairs(id) ON DELETE CASCADE,
    data    BLOB NOT NULL
);

CREATE TABLE leases (
    pair_id    INTEGER NOT NULL REFERENCES pairs(id) ON DELETE CASCADE,
    user_id    INTEGER NOT NULL REFERENCES users(id) ON DELETE CASCADE,
    leased_at  TEXT NOT NULL,
    expires_at TEXT NOT NULL,
    PRIMARY KEY (pair_id, user_id)
) WITHOUT ROWID;
CREATE INDEX leases_user ON leases(user_id);

-- Judgments are append-only: an edit inserts a new row and clears "current" on the old one,
-- so the full history stays. Exactly one of grade and cannot_judge is set.
CREATE TABLE judgments (
    id            INTEGER PRIMARY KEY,
    pair_id       INTEGER NOT NULL REFERENCES pairs(id) ON DELETE CASCADE,
    user_id       INTEGER NOT NULL REFERENCES users(id),
    grade         INTEGER,
    cannot_judge  TEXT CHECK (cannot_judge IN ('broken', 'language', 'disturbing', 'other')),
    note          TEXT NOT NULL DEFAULT '',
    time_spent_ms INTEGER NOT NULL DEFAULT 0 CHECK (time_spent_ms >= 0),
    guideline_id  INTEGER REFERENCES guideline_revisions(id),
    supersedes    INTEGER REFERENCES judgments(id),
    current       INTEGER NOT NULL DEFAULT 1 CHECK (current IN (0, 1)),
    -- Set when the assessor took the judgment back (undo); the row stays for the record.
    withdrawn_at  TEXT,
    created_at    TEXT NOT NULL,
    CHECK ((grade IS NULL) <> (cannot_judge IS NULL))
);
CREATE UNIQUE INDEX judgments_one_current ON judgments(pair_id, user_id) WHERE current = 1;
CREATE INDEX judgments_user ON judgments(user_id, created_at);

-- A lead's final grade for a pair; a later adjudication supersedes, never erases.
CREATE TABLE adjudications (
    id         INTEGER PRIMARY KEY,
    pair_id    INTEGER NOT NULL REFERENCES pairs(id) ON DELETE CASCADE,
    lead_id    INTEGER NOT NULL REFERENCES users(id),
    grade      INTEGER NOT NULL CHECK (grade >= 0),
    rationale  TEXT NOT NULL DEFAULT '',
    current    INTEGER NOT NULL DEFAULT 1 CHECK (current IN (0, 1)),
    created_at TEXT NOT NULL
);
CREATE UNIQUE INDEX adjudications_one_current ON adjudications(pair_id) WHERE current = 1;

CREATE TABLE audit_events (
    id         INTEGER PRIMARY KEY,
    at         TEXT NOT NULL,
    actor_id   INTEGER REFERENCES users(id),
    project_id INTEGER REFERENCES projects(id) ON DELETE SET NULL,
    action     TEXT NOT NULL,
    target     TEXT NOT NULL DEFAULT '',
    detail     TEXT NOT NULL DEFAULT ''
);
CREATE INDEX audit_events_at ON audit_events(at);
