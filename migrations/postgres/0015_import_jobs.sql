-- Background imports of the web Import page, kept in the database so that every instance
-- serving it can show any job, while the job runs in the instance that received the upload.
-- files is a JSON array of the uploaded names; outcome, set when the job finishes, is a JSON
-- object with the report, the problems or the failure. A running job's instance stamps
-- updated_at about once a second; a row left running with an old stamp was interrupted.
-- The JSON stays text, as in SQLite: the store reads and writes it whole.
CREATE TABLE import_jobs (
    id          text PRIMARY KEY,
    project_id  bigint NOT NULL REFERENCES projects(id) ON DELETE CASCADE,
    kind        text NOT NULL,
    files       text NOT NULL,
    total_bytes bigint NOT NULL,
    bytes_read  bigint NOT NULL DEFAULT 0,
    started_at  text NOT NULL,
    updated_at  text NOT NULL,
    finished_at text,
    outcome     text
);
CREATE INDEX import_jobs_forget ON import_jobs(updated_at);
