-- Administration: look-ups behind the audit trail's filters, the guideline history's
-- per-revision judgment counts, and one-time password links per account.

CREATE INDEX audit_events_actor ON audit_events(actor_id, at);
CREATE INDEX audit_events_project ON audit_events(project_id, at);
CREATE INDEX judgments_guideline ON judgments(guideline_id);
CREATE INDEX password_links_user ON password_links(user_id);
