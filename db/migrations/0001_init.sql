-- 0001: the first ledger schema. Column meanings are documented in
-- db/SCHEMA.md; keep both in step.

CREATE TABLE runs (
    id               INTEGER PRIMARY KEY,
    started_at       TEXT NOT NULL,
    finished_at      TEXT,
    state            TEXT NOT NULL CHECK (state IN ('running', 'complete', 'failed')),
    tool_version     TEXT NOT NULL,
    campaign_hash    TEXT,
    ruleset_hash     TEXT,
    config_hash      TEXT,
    match_hash       TEXT,
    model_hash       TEXT,
    seed             INTEGER NOT NULL,
    "full"           INTEGER NOT NULL CHECK ("full" IN (0, 1)),
    stars_total      INTEGER,
    stars_computed   INTEGER,
    stars_carried    INTEGER,
    rows_quarantined INTEGER,
    counts_json      TEXT,
    note             TEXT
);

CREATE TABLE catalogs (
    run_id           INTEGER NOT NULL REFERENCES runs (id),
    name             TEXT NOT NULL,
    release          TEXT,
    file             TEXT,
    file_sha256      TEXT,
    rows_read        INTEGER,
    rows_kept        INTEGER,
    rows_quarantined INTEGER,
    epoch            REAL,
    role             TEXT,
    PRIMARY KEY (run_id, name)
);

CREATE TABLE quarantine (
    run_id      INTEGER NOT NULL REFERENCES runs (id),
    catalog     TEXT NOT NULL,
    line        INTEGER NOT NULL,
    "column"    INTEGER,
    column_name TEXT,
    value       TEXT,
    reason      TEXT NOT NULL
);
CREATE INDEX quarantine_by_run ON quarantine (run_id, catalog, line);

CREATE TABLE stars (
    star_id   TEXT PRIMARY KEY,
    first_run INTEGER NOT NULL REFERENCES runs (id),
    last_run  INTEGER NOT NULL REFERENCES runs (id)
) WITHOUT ROWID;

CREATE TABLE inputs (
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
);

CREATE TABLE matches (
    run_id     INTEGER NOT NULL REFERENCES runs (id),
    star_id    TEXT NOT NULL,
    catalog    TEXT NOT NULL,
    source_id  TEXT,
    sep_arcsec REAL,
    match_prob REAL,
    candidates INTEGER NOT NULL,
    ambiguous  INTEGER NOT NULL CHECK (ambiguous IN (0, 1))
);
CREATE INDEX matches_by_run_star ON matches (run_id, star_id);

CREATE TABLE verdicts (
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
);
CREATE INDEX verdicts_by_run_status ON verdicts (run_id, status);

CREATE TABLE reasons (
    run_id    INTEGER NOT NULL REFERENCES runs (id),
    star_id   TEXT NOT NULL,
    rule_id   TEXT NOT NULL,
    outcome   TEXT NOT NULL CHECK (outcome IN ('fail', 'skipped', 'pass', 'info')),
    severity  TEXT,
    value     REAL,
    threshold TEXT,
    message   TEXT
);
CREATE INDEX reasons_by_run_star ON reasons (run_id, star_id);
