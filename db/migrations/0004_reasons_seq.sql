-- 0004: reasons becomes a WITHOUT ROWID table clustered on
-- (run_id, star_id, seq), where the new column seq numbers a star's reasons
-- 0, 1, 2, ... in the order they were written (until now that order was
-- the rowid's). A computed star's reasons are then one insert each into a
-- single B-tree, and are read with one range scan; the separate index
-- reasons_by_run_star is no longer needed. Every other column keeps its
-- name, type, constraint and meaning.

CREATE TABLE reasons_v4 (
    run_id    INTEGER NOT NULL REFERENCES runs (id),
    star_id   TEXT NOT NULL,
    seq       INTEGER NOT NULL CHECK (seq >= 0),
    rule_id   TEXT NOT NULL,
    outcome   TEXT NOT NULL CHECK (outcome IN ('fail', 'skipped', 'pass', 'info')),
    severity  TEXT,
    value     REAL,
    threshold TEXT,
    message   TEXT,
    PRIMARY KEY (run_id, star_id, seq)
) WITHOUT ROWID;

INSERT INTO reasons_v4 (run_id, star_id, seq, rule_id, outcome, severity, value, threshold, message)
SELECT run_id, star_id, row_number() OVER (PARTITION BY run_id, star_id ORDER BY rowid) - 1,
    rule_id, outcome, severity, value, threshold, message
FROM reasons;

DROP TABLE reasons;
ALTER TABLE reasons_v4 RENAME TO reasons;
