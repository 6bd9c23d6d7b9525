-- Assessments, observation requests with their lifecycle and leases, the history
-- of every state change, and the webhook outbox with each delivery attempt.

CREATE TABLE assessments (
  id            INTEGER PRIMARY KEY,
  object_id     TEXT    NOT NULL REFERENCES objects (id),
  created_at    TEXT    NOT NULL,
  observations  INTEGER NOT NULL,          -- tracklet length it was computed from
  summary       TEXT    NOT NULL           -- JSON: orbit summary, per-site feasibility and reasons
);
CREATE INDEX assessments_object ON assessments (object_id, id);

CREATE TABLE requests (
  id                TEXT    PRIMARY KEY,   -- rq_<random>
  object_id         TEXT    NOT NULL REFERENCES objects (id),
  site_id           TEXT    NOT NULL,
  kind              TEXT    NOT NULL CHECK (kind IN ('photometry', 'colours', 'spectrum')),
  state             TEXT    NOT NULL CHECK (state IN ('queued', 'leased', 'done', 'failed', 'lapsed', 'superseded', 'withdrawn')),
  score             REAL    NOT NULL,
  window_start      TEXT    NOT NULL,
  window_end        TEXT    NOT NULL,
  recommended_start TEXT    NOT NULL,
  expires_at        TEXT    NOT NULL,
  assessment_id     INTEGER NOT NULL REFERENCES assessments (id),
  superseded_by     TEXT    REFERENCES requests (id),
  state_reason      TEXT,
  body              TEXT    NOT NULL,      -- JSON: exposure sequence, tracking, ephemeris table, score factors
  lease_holder      TEXT,
  lease_token_hash  TEXT,
  lease_expires_at  TEXT,
  outcome           TEXT,                  -- JSON: result, observedAt, notes
  created_at        TEXT    NOT NULL,
  updated_at        TEXT    NOT NULL
);
CREATE INDEX requests_queue ON requests (site_id, state, score DESC);
CREATE INDEX requests_object ON requests (object_id, state);
CREATE INDEX requests_lease ON requests (state, lease_expires_at);

CREATE TABLE request_events (
  id          INTEGER PRIMARY KEY,
  request_id  TEXT NOT NULL REFERENCES requests (id),
  at          TEXT NOT NULL,
  from_state  TEXT,
  to_state    TEXT NOT NULL,
  detail      TEXT
);
CREATE INDEX request_events_request ON request_events (request_id, id);

CREATE TABLE deliveries (
  id               INTEGER PRIMARY KEY,
  hook_id          TEXT    NOT NULL,
  event            TEXT    NOT NULL,
  payload          TEXT    NOT NULL,      -- the exact body that is signed and sent
  state            TEXT    NOT NULL CHECK (state IN ('pending', 'delivered', 'failed')),
  attempts         INTEGER NOT NULL DEFAULT 0,
  next_attempt_at  TEXT    NOT NULL,
  created_at       TEXT    NOT NULL,
  delivered_at     TEXT
);
CREATE INDEX deliveries_due ON deliveries (state, next_attempt_at);

CREATE TABLE delivery_attempts (
  id            INTEGER PRIMARY KEY,
  delivery_id   INTEGER NOT NULL REFERENCES deliveries (id),
  at            TEXT    NOT NULL,
  status        INTEGER,                   -- HTTP status, null when no answer
  error         TEXT,
  duration_ms   REAL    NOT NULL
);
CREATE INDEX delivery_attempts_delivery ON delivery_attempts (delivery_id, id);

-- Why an object was retired (no future window at any site), in words.
ALTER TABLE objects ADD COLUMN retired_reason TEXT;
