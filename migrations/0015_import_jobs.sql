-- Background imports of the web Import page, kept in the database so that every instance
-- serving it can show any job, while the job runs in the instance that received the upload.
-- files is a JSON array of the uploaded names; outcome, set when the job finishes, is a JSON
-- object with the report, the problems or the failure. A running job's instance stamps
-- updated_at about once a second; a row left running with an old stamp was interrupted.
CREATE TABLE import_jobs (
    id          TEXT PRIMARY KEY,
    project_id  INTEGER NOT NULL REFERENCES projects(id) ON DELETE CASCADE,
    kind        TEXT NOT NULL,
    files       TEXT NOT NULL,
    total_bytes INTEGER NOT NULL,
    bytes_read  INTEGER NOT NULL DEFAULT 0,
    started_at  TEXT NOT NULL,
    updated_at  TEXT NOT NULL,
    finished_at TEXT,
    outcome     TEXT
);
CREATE INDEX import_jobs_forget ON import_jobs(updated_at);
