-- What is known of an external source of grades (users with role 'source'): the kind of
-- producer, and free provenance as the importer gave it (model and version, the prompt or its
-- SHA-256, parameters, date), a JSON object of strings.
CREATE TABLE source_details (
    user_id    INTEGER PRIMARY KEY REFERENCES users(id) ON DELETE CASCADE,
    kind       TEXT NOT NULL CHECK (kind IN ('model', 'campaign', 'heuristic')),
    about      TEXT NOT NULL DEFAULT '{}',
    updated_at TEXT NOT NULL
);
