-- The work queue in priority classes: new observations first (1), then objects
-- whose usable time begins or ends soon (2), then routine replans (3); within a
-- class the item wanted soonest goes first. Each object keeps when its latest
-- assessment says it is next usable and until when, which sets its class at the
-- next replan, and whether that assessment was a first look (a cheaper estimate
-- taken under backlog, refined later). Orbit estimates are kept, keyed by what
-- they were computed from, so a restart does not compute every one again.

ALTER TABLE work ADD COLUMN priority_class INTEGER NOT NULL DEFAULT 3 CHECK (priority_class IN (1, 2, 3));
ALTER TABLE work ADD COLUMN due_at TEXT;               -- ISO UTC: wanted by; the order within a class
UPDATE work SET due_at = enqueued_at;
CREATE INDEX work_next ON work (state, priority_class, due_at, object_id);

ALTER TABLE objects ADD COLUMN usable_from TEXT;       -- ISO UTC: start of the earliest request window
ALTER TABLE objects ADD COLUMN usable_until TEXT;      -- ISO UTC: end of the last usable window, when before the horizon's end
ALTER TABLE objects ADD COLUMN first_look_at TEXT;     -- ISO UTC: the latest assessment was a first look, made then

CREATE TABLE kept_estimates (
  object_id     TEXT    PRIMARY KEY REFERENCES objects (id),
  estimate_key  TEXT    NOT NULL,                      -- hash of tracklet, orbit block, prior, members, seed and search start
  members       INTEGER NOT NULL,
  body          BLOB    NOT NULL,                      -- the estimate's ensemble and summary (src/planning/reuse.ts)
  saved_at      TEXT    NOT NULL
);
