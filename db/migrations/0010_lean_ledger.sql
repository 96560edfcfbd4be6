-- 0010: a leaner ledger. Nothing a reader sees is lost; what could be
-- derived, or was stored once per star although it is the same for many,
-- is stored once.
--
-- 1. A star's reasons no longer repeat their rule id, outcome, severity and
--    threshold: those live once per run in reason_forms. A run since this
--    schema keeps a star's reasons in its computed_verdicts row, as the
--    JSON list reason_list: one entry [form_id, value, message] per reason
--    in order, the value null when missing and the message left out when it
--    is the form's (values are written as the shortest decimal that reads
--    back as the same 64-bit float). The reasons of earlier runs move to
--    star_reasons (form, value, own message). reasons becomes a view over
--    both with exactly the columns it had.
-- 2. A computed star's merged inputs live in its computed_verdicts row
--    (the columns of inputs, dup_count NULL for a verdict without inputs,
--    such as a withdrawn star's), so a computed star is one row and the
--    input hash is stored once. inputs becomes a view with exactly the
--    columns it had.
-- 3. computed_verdicts gains the numbers the kinematic reasons were written
--    from (distance percentiles, the flat-prior p_unbound, the Monte Carlo
--    draws used, the trace's samples and crossings). A run since this
--    schema stores those numbers instead of the kinematic reasons' text,
--    which starvet writes from them when it shows a star (samples_used is
--    set exactly for such stars). Rows of earlier runs keep their stored
--    reasons and have NULL in the new columns.
--
-- Every existing row keeps its values.

ALTER TABLE computed_verdicts ADD COLUMN samples_used INTEGER;
ALTER TABLE computed_verdicts ADD COLUMN distance_p16_kpc REAL;
ALTER TABLE computed_verdicts ADD COLUMN distance_p50_kpc REAL;
ALTER TABLE computed_verdicts ADD COLUMN distance_p84_kpc REAL;
ALTER TABLE computed_verdicts ADD COLUMN p_unbound_flat REAL;
ALTER TABLE computed_verdicts ADD COLUMN trace_samples INTEGER;
ALTER TABLE computed_verdicts ADD COLUMN trace_crossed INTEGER;
ALTER TABLE computed_verdicts ADD COLUMN reason_list TEXT;

DROP VIEW verdicts;
CREATE VIEW verdicts AS
SELECT r.id AS run_id, v.star_id AS star_id, v.status AS status, v.quality AS quality,
       v.computed_in_run AS computed_in_run, v.input_hash AS input_hash,
       v.distance_method AS distance_method, v.has_rv AS has_rv,
       v.speed_p16_kms AS speed_p16_kms, v.speed_p50_kms AS speed_p50_kms,
       v.speed_p84_kms AS speed_p84_kms, v.speed_lower_p50_kms AS speed_lower_p50_kms,
       v.r_gc_kpc AS r_gc_kpc, v.v_esc_kms AS v_esc_kms, v.p_unbound AS p_unbound,
       v.p_unbound_lower AS p_unbound_lower, v.origin AS origin, v.p_gc_origin AS p_gc_origin,
       v.gc_consistency AS gc_consistency, v.flight_time_myr AS flight_time_myr,
       v.model_name AS model_name, v.samples_used AS samples_used,
       v.distance_p16_kpc AS distance_p16_kpc, v.distance_p50_kpc AS distance_p50_kpc,
       v.distance_p84_kpc AS distance_p84_kpc, v.p_unbound_flat AS p_unbound_flat,
       v.trace_samples AS trace_samples, v.trace_crossed AS trace_crossed
  FROM runs AS r
  JOIN computed_verdicts AS v ON v.computed_in_run <= r.id
 WHERE v.computed_in_run = (
       SELECT max(w.computed_in_run)
         FROM computed_verdicts AS w
         JOIN runs AS c ON c.id = w.computed_in_run
        WHERE w.star_id = v.star_id AND w.computed_in_run <= r.id
          AND (w.computed_in_run = r.id OR (c.state = 'complete' AND r.state <> 'failed')));

CREATE TABLE reason_forms (
    run_id    INTEGER NOT NULL REFERENCES runs (id),
    form_id   INTEGER NOT NULL CHECK (form_id >= 0),
    rule_id   TEXT NOT NULL,
    outcome   TEXT NOT NULL CHECK (outcome IN ('fail', 'skipped', 'pass', 'info')),
    severity  TEXT,
    threshold TEXT,
    message   TEXT,
    PRIMARY KEY (run_id, form_id)
) WITHOUT ROWID;

CREATE TABLE star_reasons (
    run_id  INTEGER NOT NULL REFERENCES runs (id),
    star_id TEXT NOT NULL,
    seq     INTEGER NOT NULL CHECK (seq >= 0),
    form_id INTEGER NOT NULL,
    value   REAL,
    message TEXT,
    PRIMARY KEY (run_id, star_id, seq)
) WITHOUT ROWID;

-- Old rows: one form per distinct (rule, outcome, severity, threshold) of a
-- run, each row keeping its own message.
CREATE TEMP TABLE forms_0010 AS
SELECT run_id, rule_id, outcome, severity, threshold,
       row_number() OVER (PARTITION BY run_id ORDER BY rule_id, outcome, severity, threshold) - 1 AS form_id
  FROM (SELECT DISTINCT run_id, rule_id, outcome, severity, threshold FROM reasons);

INSERT INTO reason_forms (run_id, form_id, rule_id, outcome, severity, threshold, message)
SELECT run_id, form_id, rule_id, outcome, severity, threshold, NULL FROM forms_0010;

INSERT INTO star_reasons (run_id, star_id, seq, form_id, value, message)
SELECT r.run_id, r.star_id, r.seq, f.form_id, r.value, r.message
  FROM reasons AS r
  JOIN forms_0010 AS f
    ON f.run_id = r.run_id AND f.rule_id = r.rule_id AND f.outcome = r.outcome
   AND f.severity IS r.severity AND f.threshold IS r.threshold
 ORDER BY r.run_id, r.star_id, r.seq;

DROP TABLE forms_0010;
DROP TABLE reasons;

-- A reason's message is its own when stored, else its form's. CROSS JOIN
-- keeps SQLite's join order: each list entry finds its form by key.
CREATE VIEW reasons AS
SELECT s.run_id AS run_id, s.star_id AS star_id, s.seq AS seq, f.rule_id AS rule_id,
       f.outcome AS outcome, f.severity AS severity, s.value AS value, f.threshold AS threshold,
       coalesce(s.message, f.message) AS message
  FROM star_reasons AS s
  JOIN reason_forms AS f ON f.run_id = s.run_id AND f.form_id = s.form_id
UNION ALL
SELECT v.computed_in_run, v.star_id, CAST(j.key AS INTEGER), f.rule_id,
       f.outcome, f.severity, CAST(j.value ->> 1 AS REAL), f.threshold,
       coalesce(j.value ->> 2, f.message)
  FROM computed_verdicts AS v
 CROSS JOIN json_each(v.reason_list) AS j
 CROSS JOIN reason_forms AS f ON f.run_id = v.computed_in_run AND f.form_id = j.value ->> 0;

ALTER TABLE computed_verdicts ADD COLUMN ra REAL;
ALTER TABLE computed_verdicts ADD COLUMN dec REAL;
ALTER TABLE computed_verdicts ADD COLUMN ra_err REAL;
ALTER TABLE computed_verdicts ADD COLUMN dec_err REAL;
ALTER TABLE computed_verdicts ADD COLUMN parallax REAL;
ALTER TABLE computed_verdicts ADD COLUMN parallax_err REAL;
ALTER TABLE computed_verdicts ADD COLUMN pm_ra REAL;
ALTER TABLE computed_verdicts ADD COLUMN pm_ra_err REAL;
ALTER TABLE computed_verdicts ADD COLUMN pm_dec REAL;
ALTER TABLE computed_verdicts ADD COLUMN pm_dec_err REAL;
ALTER TABLE computed_verdicts ADD COLUMN corr_ra_dec REAL;
ALTER TABLE computed_verdicts ADD COLUMN corr_parallax_pm_ra REAL;
ALTER TABLE computed_verdicts ADD COLUMN corr_parallax_pm_dec REAL;
ALTER TABLE computed_verdicts ADD COLUMN corr_pm_ra_pm_dec REAL;
ALTER TABLE computed_verdicts ADD COLUMN rv REAL;
ALTER TABLE computed_verdicts ADD COLUMN rv_err REAL;
ALTER TABLE computed_verdicts ADD COLUMN distance REAL;
ALTER TABLE computed_verdicts ADD COLUMN distance_err REAL;
ALTER TABLE computed_verdicts ADD COLUMN fit_residual REAL;
ALTER TABLE computed_verdicts ADD COLUMN excess_noise REAL;
ALTER TABLE computed_verdicts ADD COLUMN excess_noise_sig REAL;
ALTER TABLE computed_verdicts ADD COLUMN fit_visits REAL;
ALTER TABLE computed_verdicts ADD COLUMN duplicate_flag REAL;
ALTER TABLE computed_verdicts ADD COLUMN mag REAL;
ALTER TABLE computed_verdicts ADD COLUMN color REAL;
ALTER TABLE computed_verdicts ADD COLUMN snr REAL;
ALTER TABLE computed_verdicts ADD COLUMN distance_modulus REAL;
ALTER TABLE computed_verdicts ADD COLUMN distance_modulus_err REAL;
ALTER TABLE computed_verdicts ADD COLUMN dup_count INTEGER;

-- Before this schema inputs and computed_verdicts held the same hash for a
-- star (the writer took the verdict's from the inputs); a verdict without
-- one takes the inputs'.
UPDATE computed_verdicts
   SET (input_hash, ra, dec, ra_err, dec_err, parallax, parallax_err, pm_ra, pm_ra_err, pm_dec, pm_dec_err, corr_ra_dec, corr_parallax_pm_ra, corr_parallax_pm_dec, corr_pm_ra_pm_dec, rv, rv_err, distance, distance_err, fit_residual, excess_noise, excess_noise_sig, fit_visits, duplicate_flag, mag, color, snr, distance_modulus, distance_modulus_err, dup_count) =
       (SELECT coalesce(computed_verdicts.input_hash, i.input_hash), i.ra, i.dec, i.ra_err, i.dec_err, i.parallax, i.parallax_err, i.pm_ra, i.pm_ra_err, i.pm_dec, i.pm_dec_err, i.corr_ra_dec, i.corr_parallax_pm_ra, i.corr_parallax_pm_dec, i.corr_pm_ra_pm_dec, i.rv, i.rv_err, i.distance, i.distance_err, i.fit_residual, i.excess_noise, i.excess_noise_sig, i.fit_visits, i.duplicate_flag, i.mag, i.color, i.snr, i.distance_modulus, i.distance_modulus_err, i.dup_count
          FROM inputs AS i
         WHERE i.run_id = computed_verdicts.computed_in_run AND i.star_id = computed_verdicts.star_id)
 WHERE EXISTS (SELECT 1 FROM inputs AS i
                WHERE i.run_id = computed_verdicts.computed_in_run AND i.star_id = computed_verdicts.star_id);

DROP TABLE inputs;

CREATE VIEW inputs AS
SELECT computed_in_run AS run_id, star_id, input_hash, ra, dec, ra_err, dec_err, parallax, parallax_err, pm_ra, pm_ra_err, pm_dec, pm_dec_err, corr_ra_dec, corr_parallax_pm_ra, corr_parallax_pm_dec, corr_pm_ra_pm_dec, rv, rv_err, distance, distance_err, fit_residual, excess_noise, excess_noise_sig, fit_visits, duplicate_flag, mag, color, snr, distance_modulus, distance_modulus_err, dup_count
  FROM computed_verdicts
 WHERE dup_count IS NOT NULL;
