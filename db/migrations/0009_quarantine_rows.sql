-- 0009: a rejected row of a binary table (FITS, VOTable, Parquet) has a
-- row number, not a line. quarantine gains table_row, the 1-based row of
-- the table; line stays the 1-based line of a text file and is 0 for a
-- binary table's row. Existing rows keep their values (table_row NULL).

ALTER TABLE quarantine ADD COLUMN table_row INTEGER;
