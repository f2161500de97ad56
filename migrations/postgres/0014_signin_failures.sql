-- Failed sign-ins, for throttling guesses across every instance that shares the database:
-- one row per failure and key (an account or an address), the key kept as its SHA-256 so
-- that a password typed into the username field is never stored.
CREATE TABLE signin_failures (
    key_hash text NOT NULL,
    at       text NOT NULL
);
CREATE INDEX signin_failures_key ON signin_failures(key_hash, at);
CREATE INDEX signin_failures_at ON signin_failures(at);
