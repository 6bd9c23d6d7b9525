-- Backbone: notices as received, rejections, objects, deduplicated observations,
-- the work queue and the state of each polled source.

CREATE TABLE notices (
  id            INTEGER PRIMARY KEY,
  sender        TEXT    NOT NULL,
  notice_id     TEXT    NOT NULL,
  object_id     TEXT    NOT NULL,
  source        TEXT    NOT NULL,            -- inbox:<file>, feed:<id>, http
  received_at   TEXT    NOT NULL,            -- ISO UTC
  issued_at     TEXT    NOT NULL,
  raw           TEXT    NOT NULL,            -- the notice as received
  kind          TEXT    NOT NULL CHECK (kind IN ('observations', 'retraction')),
  state         TEXT    NOT NULL CHECK (state IN ('received', 'merged')),
  observations_added INTEGER NOT NULL DEFAULT 0,
  UNIQUE (sender, notice_id)
);
CREATE INDEX notices_object ON notices (object_id);

CREATE TABLE rejections (
  id            INTEGER PRIMARY KEY,
  source        TEXT    NOT NULL,
  received_at   TEXT    NOT NULL,
  sender        TEXT,
  notice_id     TEXT,
  raw           TEXT    NOT NULL,            -- the payload as received
  reasons       TEXT    NOT NULL             -- JSON array of {path, message}
);

CREATE TABLE objects (
  id                 TEXT PRIMARY KEY,       -- the sender's temporary designation
  state              TEXT NOT NULL CHECK (state IN ('active', 'retracted', 'retired')),
  first_notice_at    TEXT NOT NULL,
  last_notice_at     TEXT NOT NULL,
  retraction_reason  TEXT,
  retracted_at       TEXT,
  orbit              TEXT                    -- JSON orbit block from the latest notice carrying one
);

CREATE TABLE observations (
  id            INTEGER PRIMARY KEY,
  object_id     TEXT    NOT NULL REFERENCES objects (id),
  notice_row    INTEGER NOT NULL REFERENCES notices (id),
  t             TEXT    NOT NULL,            -- ISO UTC
  ra_deg        REAL    NOT NULL,
  dec_deg       REAL    NOT NULL,
  sigma_arcsec  REAL    NOT NULL,
  mag           REAL,
  band          TEXT,
  obs_lat_deg   REAL    NOT NULL,
  obs_lon_deg   REAL    NOT NULL,
  obs_height_m  REAL    NOT NULL,
  UNIQUE (object_id, t, obs_lat_deg, obs_lon_deg, obs_height_m)
);

CREATE TABLE work (
  object_id     TEXT PRIMARY KEY REFERENCES objects (id),
  state         TEXT NOT NULL CHECK (state IN ('waiting', 'running', 'done', 'failed')),
  attempts      INTEGER NOT NULL DEFAULT 0,
  last_error    TEXT,
  enqueued_at   TEXT NOT NULL,
  updated_at    TEXT NOT NULL
);
CREATE INDEX work_state ON work (state, enqueued_at);

CREATE TABLE source_state (
  source            TEXT PRIMARY KEY,        -- inbox, feed:<id>
  last_attempt_at   TEXT,
  last_success_at   TEXT,
  consecutive_failures INTEGER NOT NULL DEFAULT 0,
  next_attempt_at   TEXT,
  etag              TEXT,
  last_modified     TEXT,
  last_error        TEXT,
  notices_seen      INTEGER NOT NULL DEFAULT 0
);
