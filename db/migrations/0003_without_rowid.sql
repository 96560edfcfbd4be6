-- 0003: inputs and verdicts become WITHOUT ROWID tables clustered on their
-- primary key (run_id, star_id). A run writes its stars in star_id order,
-- so each insert appends to one B-tree instead of a rowid table plus the
-- primary-key index; reading a run's verdicts is one range scan. Every
-- column keeps its name, type, constraint and meaning; the rows are
-- copied unchanged.

CREATE TABLE inputs_v3 (
    run_id               INTEGER NOT NULL REFERENCES runs (id),
    star_id              TEXT NOT NULL,
    input_hash           TEXT NOT NULL,
    ra                   REAL,
    dec                  REAL,
    ra_err               REAL,
    dec_err              REAL,
    parallax             REAL,
    parallax_err         REAL,
    pm_ra                REAL,
    pm_ra_err            REAL,
    pm_dec               REAL,
    pm_dec_err           REAL,
    corr_ra_dec          REAL,
    corr_parallax_pm_ra  REAL,
    corr_parallax_pm_dec REAL,
    corr_pm_ra_pm_dec    REAL,
    rv                   REAL,
    rv_err               REAL,
    distance             REAL,
    distance_err         REAL,
    fit_residual         REAL,
    excess_noise         REAL,
    excess_noise_sig     REAL,
    visibility_periods   REAL,
    duplicate_flag       REAL,
    mag                  REAL,
    color                REAL,
    snr                  REAL,
    distance_modulus     REAL,
    distance_modulus_err REAL,
    dup_count            INTEGER NOT NULL DEFAULT 0,
    PRIMARY KEY (run_id, star_id)
) WITHOUT ROWID;

INSERT INTO inputs_v3 (run_id, star_id, input_hash, ra, dec, ra_err, dec_err, parallax, parallax_err,
    pm_ra, pm_ra_err, pm_dec, pm_dec_err, corr_ra_dec, corr_parallax_pm_ra, corr_parallax_pm_dec,
    corr_pm_ra_pm_dec, rv, rv_err, distance, distance_err, fit_residual, excess_noise, excess_noise_sig,
    visibility_periods, duplicate_flag, mag, color, snr, distance_modulus, distance_modulus_err, dup_count)
SELECT run_id, star_id, input_hash, ra, dec, ra_err, dec_err, parallax, parallax_err,
    pm_ra, pm_ra_err, pm_dec, pm_dec_err, corr_ra_dec, corr_parallax_pm_ra, corr_parallax_pm_dec,
    corr_pm_ra_pm_dec, rv, rv_err, distance, distance_err, fit_residual, excess_noise, excess_noise_sig,
    visibility_periods, duplicate_flag, mag, color, snr, distance_modulus, distance_modulus_err, dup_count
FROM inputs ORDER BY run_id, star_id;

DROP TABLE inputs;
ALTER TABLE inputs_v3 RENAME TO inputs;

CREATE TABLE verdicts_v3 (
    run_id              INTEGER NOT NULL REFERENCES runs (id),
    star_id             TEXT NOT NULL,
    status              TEXT NOT NULL CHECK (status <> ''),
    quality             TEXT CHECK (quality IN ('pass', 'flag', 'reject')),
    computed_in_run     INTEGER NOT NULL REFERENCES runs (id),
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
    PRIMARY KEY (run_id, star_id)
) WITHOUT ROWID;

INSERT INTO verdicts_v3 (run_id, star_id, status, quality, computed_in_run, input_hash, distance_method,
    has_rv, speed_p16_kms, speed_p50_kms, speed_p84_kms, speed_lower_p50_kms, r_gc_kpc, v_esc_kms,
    p_unbound, p_unbound_lower, origin, p_gc_origin, gc_consistency, flight_time_myr, model_name)
SELECT run_id, star_id, status, quality, computed_in_run, input_hash, distance_method,
    has_rv, speed_p16_kms, speed_p50_kms, speed_p84_kms, speed_lower_p50_kms, r_gc_kpc, v_esc_kms,
    p_unbound, p_unbound_lower, origin, p_gc_origin, gc_consistency, flight_time_myr, model_name
FROM verdicts ORDER BY run_id, star_id;

DROP TABLE verdicts;
ALTER TABLE verdicts_v3 RENAME TO verdicts;
CREATE INDEX verdicts_by_run_status ON verdicts (run_id, status);
