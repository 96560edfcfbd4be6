-- 0012: what starvet weigh inferred from a run's stars: the local escape
-- speed and the dark halo's mass, each method's result with its intervals,
-- the settings and model it was made with, and every star it considered
-- with whether it entered and why not.

CREATE TABLE inferences (
    id         INTEGER PRIMARY KEY,
    run_id     INTEGER NOT NULL REFERENCES runs (id),
    made_at    TEXT NOT NULL,
    tool_version TEXT NOT NULL,
    model_hash TEXT NOT NULL,
    settings_json TEXT NOT NULL,
    excluded_json TEXT NOT NULL,
    curves_json TEXT
);

CREATE TABLE inference_results (
    inference_id INTEGER NOT NULL REFERENCES inferences (id),
    method     TEXT NOT NULL,
    parameter  TEXT NOT NULL,
    median     REAL,
    lo68       REAL,
    hi68       REAL,
    lo90       REAL,
    hi90       REAL,
    stars      INTEGER NOT NULL,
    note       TEXT,
    PRIMARY KEY (inference_id, method, parameter)
) WITHOUT ROWID;

CREATE TABLE inference_stars (
    inference_id INTEGER NOT NULL REFERENCES inferences (id),
    method     TEXT NOT NULL,
    star_id    TEXT NOT NULL,
    used       INTEGER NOT NULL CHECK (used IN (0, 1)),
    reason     TEXT NOT NULL,
    PRIMARY KEY (inference_id, method, star_id)
) WITHOUT ROWID;
