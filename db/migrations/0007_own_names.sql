-- 0007: the ledger's column names are starvet's own. The id of a star's
-- best counterpart in a secondary catalog is matches.counterpart_id, and
-- the number of separate visit groups used in the astrometric fit is
-- inputs.fit_visits. Both are renamed in place: every row keeps its value.

ALTER TABLE matches RENAME COLUMN source_id TO counterpart_id;
ALTER TABLE inputs RENAME COLUMN visibility_periods TO fit_visits;
