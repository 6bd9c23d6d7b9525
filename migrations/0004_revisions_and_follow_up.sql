-- Requests revised in place by replans (a revision number, when, and which local
-- night the window belongs to), each revision kept with what changed; when a lease
-- began (outcomes are checked against it); follow-up positions held back as a
-- possible misidentification until an operator confirms them.

ALTER TABLE requests ADD COLUMN revision INTEGER NOT NULL DEFAULT 1;
ALTER TABLE requests ADD COLUMN revised_at TEXT;
-- Local date (YYYY-MM-DD, local mean solar time) of the evening the window's night begins.
ALTER TABLE requests ADD COLUMN night TEXT;
ALTER TABLE requests ADD COLUMN leased_at TEXT;

CREATE TABLE request_revisions (
  id            INTEGER PRIMARY KEY,
  request_id    TEXT    NOT NULL REFERENCES requests (id),
  revision      INTEGER NOT NULL,
  at            TEXT    NOT NULL,
  assessment_id INTEGER NOT NULL REFERENCES assessments (id),
  score         REAL    NOT NULL,
  window_start  TEXT    NOT NULL,
  window_end    TEXT    NOT NULL,
  changes       TEXT    NOT NULL,           -- JSON array of {field, from, to}; empty for the first revision
  UNIQUE (request_id, revision)
);

-- Queue pages: keyset order (score DESC, window_start, id) per site.
CREATE INDEX requests_queue_page ON requests (site_id, state, score DESC, window_start, id);

ALTER TABLE observations ADD COLUMN held_reason TEXT;     -- set: not used by assessments until confirmed
ALTER TABLE observations ADD COLUMN confirmed_at TEXT;
ALTER TABLE observations ADD COLUMN confirmed_by TEXT;
