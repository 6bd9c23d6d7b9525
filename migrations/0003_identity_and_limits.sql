-- Object identity: an object is a sender's designation. The object row keeps its
-- one id (used by requests, work, assessments and the API); the names that lead
-- to it are kept apart, so another sender's designation reaches it only by an
-- explicit link. Also: why an object's last assessment or estimate failed, inbox
-- files that failed to be read, and how much of each source's intake was refused.

ALTER TABLE objects ADD COLUMN sender TEXT;
ALTER TABLE objects ADD COLUMN designation TEXT;
-- JSON {kind, stage, message, at, dataKey}: the last failed assessment or on-demand estimate; null after a success.
ALTER TABLE objects ADD COLUMN failure TEXT;

UPDATE objects SET
  designation = id,
  sender = COALESCE((SELECT n.sender FROM notices n WHERE n.object_id = objects.id ORDER BY n.id LIMIT 1), '(unknown)');

CREATE TABLE object_names (
  sender        TEXT NOT NULL,
  designation   TEXT NOT NULL,
  object_id     TEXT NOT NULL REFERENCES objects (id),
  named_at      TEXT NOT NULL,               -- ISO UTC
  link          TEXT,                        -- JSON {sender, designation} of the name it was linked to; null for the object's own name
  PRIMARY KEY (sender, designation)
);
CREATE INDEX object_names_object ON object_names (object_id);

-- Every sender that already wrote to an object keeps its name pointing there.
INSERT OR IGNORE INTO object_names (sender, designation, object_id, named_at, link)
  SELECT n.sender, n.object_id, n.object_id, MIN(n.received_at), NULL FROM notices n
  JOIN objects o ON o.id = n.object_id GROUP BY n.sender, n.object_id;
INSERT OR IGNORE INTO object_names (sender, designation, object_id, named_at, link)
  SELECT sender, designation, id, first_notice_at, NULL FROM objects;

CREATE TABLE inbox_attempts (
  file          TEXT PRIMARY KEY,            -- name in the inbox folder
  attempts      INTEGER NOT NULL DEFAULT 0,
  last_error    TEXT,
  updated_at    TEXT NOT NULL
);

ALTER TABLE source_state ADD COLUMN notices_rejected INTEGER NOT NULL DEFAULT 0;
ALTER TABLE source_state ADD COLUMN last_poll_notices INTEGER;
ALTER TABLE source_state ADD COLUMN last_poll_rejected INTEGER;
