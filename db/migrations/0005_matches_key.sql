-- 0005: matches becomes a WITHOUT ROWID table keyed by
-- (run_id, star_id, catalog): a star has at most one row per secondary
-- catalog, so the key is natural, each row is one B-tree insert, and the
-- separate index matches_by_run_star is no longer needed. Every column
-- keeps its name, type, constraint and meaning.

CREATE TABLE matches_v5 (
    run_id     INTEGER NOT NULL REFERENCES runs (id),
    star_id    TEXT NOT NULL,
    catalog    TEXT NOT NULL,
    source_id  TEXT,
    sep_arcsec REAL,
    match_prob REAL,
    candidates INTEGER NOT NULL,
    ambiguous  INTEGER NOT NULL CHECK (ambiguous IN (0, 1)),
    PRIMARY KEY (run_id, star_id, catalog)
) WITHOUT ROWID;

INSERT INTO matches_v5 (run_id, star_id, catalog, source_id, sep_arcsec, match_prob, candidates, ambiguous)
SELECT run_id, star_id, catalog, source_id, sep_arcsec, match_prob, candidates, ambiguous
FROM matches;

DROP TABLE matches;
ALTER TABLE matches_v5 RENAME TO matches;
