-- 0008: a run records the values of the settings that decided its results,
-- not only their hashes: one row per named setting (names in SCHEMA.md)
-- and the text of the effective rule file. Runs written before this
-- migration have no rows here and a NULL rule_text: their settings were
-- not recorded.

CREATE TABLE run_settings (
    run_id INTEGER NOT NULL REFERENCES runs(id),
    name   TEXT NOT NULL,
    value  TEXT NOT NULL,
    PRIMARY KEY (run_id, name)
) WITHOUT ROWID;

ALTER TABLE runs ADD COLUMN rule_text TEXT;
