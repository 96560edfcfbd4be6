-- 0002: back-traced crossings of the Galactic plane, for the report's
-- origin plot. Written for computed stars only (a carried-forward star's
-- crossings live at its computed_in_run), and only for the stars the
-- pipeline chooses to keep them for.

CREATE TABLE crossings (
    run_id  INTEGER NOT NULL REFERENCES runs (id),
    star_id TEXT NOT NULL,
    x_kpc   REAL NOT NULL,
    y_kpc   REAL NOT NULL,
    t_myr   REAL NOT NULL
);
CREATE INDEX crossings_by_run_star ON crossings (run_id, star_id);
