-- 0006: a carried-forward verdict is no longer a copied row. The table
-- computed_verdicts holds one row per computation of a star's verdict,
-- keyed by (star_id, computed_in_run); verdicts becomes a view giving every
-- run its complete set, one row per star, exactly as the table did: a
-- star's verdict in run R is its latest computation made in R itself or in
-- an earlier complete run (a failed run's set holds only what it computed
-- before it stopped). stars becomes a view over the same rows. Carrying a
-- million unchanged stars forward then writes nothing, and no row of an
-- earlier run is ever updated.
--
-- Upgrading keeps every computed row unchanged; the copies a complete run
-- made of earlier runs' verdicts are dropped, since the view gives the
-- same rows. A failed run's copies are dropped too: it now shows only the
-- stars it computed itself.

CREATE TABLE computed_verdicts (
    star_id             TEXT NOT NULL,
    computed_in_run     INTEGER NOT NULL REFERENCES runs (id),
    status              TEXT NOT NULL CHECK (status <> ''),
    quality             TEXT CHECK (quality IN ('pass', 'flag', 'reject')),
    input_hash          TEXT,
    distance_method     TEXT,
    has_rv              INTEGER NOT NULL CHECK (has_rv IN (0, 1)),
    speed_p16_kms       REAL,
    speed_p50_kms       REAL,
    speed_p84_kms       REAL,
    speed_lower_p50_kms REAL,
    r_gc_kpc            REAL,
    v_esc_kms           REAL,
    p_unbound           REAL,
    p_unbound_lower     REAL,
    origin              TEXT,
    p_gc_origin         REAL,
    gc_consistency      REAL,
    flight_time_myr     REAL,
    model_name          TEXT,
    PRIMARY KEY (star_id, computed_in_run)
) WITHOUT ROWID;

INSERT INTO computed_verdicts (star_id, computed_in_run, status, quality, input_hash, distance_method,
    has_rv, speed_p16_kms, speed_p50_kms, speed_p84_kms, speed_lower_p50_kms, r_gc_kpc, v_esc_kms,
    p_unbound, p_unbound_lower, origin, p_gc_origin, gc_consistency, flight_time_myr, model_name)
SELECT star_id, computed_in_run, status, quality, input_hash, distance_method,
    has_rv, speed_p16_kms, speed_p50_kms, speed_p84_kms, speed_lower_p50_kms, r_gc_kpc, v_esc_kms,
    p_unbound, p_unbound_lower, origin, p_gc_origin, gc_consistency, flight_time_myr, model_name
FROM verdicts WHERE computed_in_run = run_id ORDER BY star_id, computed_in_run;

DROP INDEX verdicts_by_run_status;
DROP TABLE verdicts;
DROP TABLE stars;

-- For each run r and each computation v made in r or before it: v is the
-- star's verdict in r when no later computation up to r is eligible.
-- Eligible: made in r itself, or in a complete run when r has not failed.
CREATE VIEW verdicts AS
SELECT r.id AS run_id, v.star_id AS star_id, v.status AS status, v.quality AS quality,
       v.computed_in_run AS computed_in_run, v.input_hash AS input_hash,
       v.distance_method AS distance_method, v.has_rv AS has_rv,
       v.speed_p16_kms AS speed_p16_kms, v.speed_p50_kms AS speed_p50_kms,
       v.speed_p84_kms AS speed_p84_kms, v.speed_lower_p50_kms AS speed_lower_p50_kms,
       v.r_gc_kpc AS r_gc_kpc, v.v_esc_kms AS v_esc_kms, v.p_unbound AS p_unbound,
       v.p_unbound_lower AS p_unbound_lower, v.origin AS origin, v.p_gc_origin AS p_gc_origin,
       v.gc_consistency AS gc_consistency, v.flight_time_myr AS flight_time_myr,
       v.model_name AS model_name
  FROM runs AS r
  JOIN computed_verdicts AS v ON v.computed_in_run <= r.id
 WHERE v.computed_in_run = (
       SELECT max(w.computed_in_run)
         FROM computed_verdicts AS w
         JOIN runs AS c ON c.id = w.computed_in_run
        WHERE w.star_id = v.star_id AND w.computed_in_run <= r.id
          AND (w.computed_in_run = r.id OR (c.state = 'complete' AND r.state <> 'failed')));

-- A star computed in a complete run is in every later run that has not
-- failed, so its last run is the newest such run; a computation of a
-- running or failed run counts for that run alone.
CREATE VIEW stars AS
SELECT v.star_id AS star_id,
       min(v.computed_in_run) AS first_run,
       max(CASE WHEN c.state = 'complete'
                THEN (SELECT max(id) FROM runs WHERE state <> 'failed')
                ELSE v.computed_in_run END) AS last_run
  FROM computed_verdicts AS v
  JOIN runs AS c ON c.id = v.computed_in_run
 GROUP BY v.star_id;

-- What a run computed, by status: one range of this index.
CREATE INDEX computed_verdicts_by_run ON computed_verdicts (computed_in_run, status);
