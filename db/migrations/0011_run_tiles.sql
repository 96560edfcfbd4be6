-- 0011: a run gathered from the ledgers of a split campaign's sky tiles
-- records, per tile, the tile ledger and the run of it that was gathered.
-- A later gather carries forward the stars those runs computed.

CREATE TABLE run_tiles (
    run_id   INTEGER NOT NULL REFERENCES runs (id),
    tile     TEXT NOT NULL,
    ledger   TEXT NOT NULL,
    tile_run INTEGER NOT NULL,
    PRIMARY KEY (run_id, tile)
) WITHOUT ROWID;
