// make_fixtures.js writes the Parquet fixtures of catalog/parquet's tests
// with DuckDB, a writer independent of the Go library starvet reads with.
//
//   cd /some/scratch && npm install @duckdb/node-api@1.5.6-r.1
//   NODE_PATH=/some/scratch/node_modules node make_fixtures.js   (run in testdata/parquet)
//
// Every value the tests compare with is stated here. All names and ids are
// invented.
'use strict';
const fs = require('fs');
const { DuckDBInstance } = require('@duckdb/node-api');

// The typed table: one row per line. Columns and their DuckDB types:
//   id VARCHAR, ra DOUBLE, dec DOUBLE, parallax FLOAT, pm_ra DOUBLE,
//   rv SMALLINT (INT32, signed 16), fit_visits USMALLINT (INT32, unsigned 16),
//   snr BIGINT (INT64), excess_noise_sig UBIGINT (INT64, unsigned 64),
//   duplicate_flag BOOLEAN, mag FLOAT, color DOUBLE
// The file holds the first 6 of these rows, then 4096 filler rows
// (id 'fill-<n>' for n = 0..4095, ra = n / 16, dec = -45, parallax 0.5,
// pm_ra 2, rv 3, fit_visits 4, snr 5, excess_noise_sig 6, duplicate_flag
// true, mag 17, color 1), then the last 6: 4108 rows in row groups of
// 2048, 2048 and 12 rows. Special row k (1-based, k <= 6) is file row k;
// special row k > 6 is file row k + 4096.
// Expected verdicts (special rows):
//   1-3, 6, 8-9, 11-12 kept;
//   4: id null -> quarantined (missing id)
//   5: pm_ra +Inf -> quarantined (not finite)
//   7: ra NaN -> quarantined (ra is required; a stored NaN is missing)
//   10: dec 95 -> quarantined (out of range)
// Nulls kept as missing: row 2 parallax (float), row 3 rv (int),
// row 6 color NaN (stored value, missing), row 8 fit_visits null.
const typedRows = `
('kx-001', 10.5, -20.25, 1.5::FLOAT, 3.25, -120, 12, 40, 7, false, 14.5::FLOAT, 0.75),
('kx-002', 11.0, -21.0, NULL, 2.0, 35, 9, 41, 8, true, 15.0::FLOAT, 1.0),
('kx-003', 12.0, -22.0, 0.25::FLOAT, -1.5, NULL, 65535, 9007199254740993, 18446744073709551615, false, 16.0::FLOAT, 1.25),
(NULL, 13.0, -23.0, 0.5::FLOAT, 1.0, 1, 1, 1, 1, false, 17.0::FLOAT, 1.5),
('kx-005', 14.0, -24.0, 0.5::FLOAT, 'inf'::DOUBLE, 1, 1, 1, 1, false, 17.5::FLOAT, 1.5),
('kx-006', 15.0, -25.0, 0.125::FLOAT, 1.0, -32768, 1, -5, 0, true, 18.0::FLOAT, 'nan'::DOUBLE),
('kx-007', 'nan'::DOUBLE, -26.0, 0.5::FLOAT, 1.0, 1, 1, 1, 1, false, 18.5::FLOAT, 1.5),
('kx-008', 17.0, -27.0, 0.5::FLOAT, 1.0, 1, NULL, 1, 1, false, 19.0::FLOAT, 1.5),
('kx-009', 18.0, 89.5, 0.5::FLOAT, 1.0, 1, 1, 1, 1, false, 19.5::FLOAT, 1.5),
('kx-010', 19.0, 95.0, 0.5::FLOAT, 1.0, 1, 1, 1, 1, false, 20.0::FLOAT, 1.5),
('kx-011', 359.875, -89.5, 0.5::FLOAT, 1.0, 32767, 1, 1, 1, false, 20.5::FLOAT, 1.5),
('kx-012', 0.0, 0.0, 0.5::FLOAT, 1.0, 1, 1, 1, 1, false, 21.0::FLOAT, 1.5)`;

const typedCols = `id VARCHAR, ra DOUBLE, dec DOUBLE, parallax FLOAT, pm_ra DOUBLE, rv SMALLINT,
  fit_visits USMALLINT, snr BIGINT, excess_noise_sig UBIGINT, duplicate_flag BOOLEAN, mag FLOAT, color DOUBLE`;

// The units table: an ECSV-style YAML schema in the key-value metadata
// entry table_meta_yaml gives units and UCDs; plx_a is found by its UCD.
//   star_ref (BIGINT id, decimal text), alpha deg, delta deg,
//   plx_a in uas (ucd pos.parallax.trig), pm_ra in mas.yr**-1.
const unitsYAML = [
  '# %ECSV 1.0',
  'datatype:',
  '- {name: star_ref, datatype: int64, meta: {ucd: meta.id}}',
  '- {name: alpha, unit: deg, datatype: float64, meta: {ucd: pos.eq.ra}}',
  '- name: delta',
  '  unit: deg',
  '  datatype: float64',
  '  meta: {ucd: pos.eq.dec}',
  '- {name: plx_a, unit: uas, datatype: float64, meta: {ucd: pos.parallax.trig}}',
  '- {name: pm_ra, unit: mas.yr**-1, datatype: float64}',
].join('\n');

// The catalog given both as CSV and as Parquet: 300 rows, a fixed
// pseudo-random sequence (a 32-bit xorshift), numbers written with
// JavaScript's shortest round-trip text; about a tenth of parallax and
// pm_dec cells empty (null).
function sameCatalog() {
  let s = 2463534242 >>> 0;
  const rnd = () => { s ^= s << 13; s >>>= 0; s ^= s >>> 17; s ^= s << 5; s >>>= 0; return s / 4294967296; };
  const lines = ['id,ra,dec,parallax,parallax_err,pm_ra,pm_dec,fit_residual,mag'];
  for (let i = 0; i < 300; i++) {
    const cells = [`qv${1000 + i}`, rnd() * 360, rnd() * 180 - 90, rnd() * 4 - 1, rnd() * 0.3,
      (rnd() - 0.5) * 40, (rnd() - 0.5) * 40, 1 + rnd() * 0.4, 12 + rnd() * 8];
    if (rnd() < 0.1) cells[3] = '';
    if (rnd() < 0.1) cells[6] = '';
    lines.push(cells.map(String).join(','));
  }
  return lines.join('\n') + '\n';
}

async function main() {
  const inst = await DuckDBInstance.create(':memory:');
  const con = await inst.connect();
  const run = (sql) => con.run(sql);
  await run(`CREATE TABLE typed (${typedCols})`);
  await run(`CREATE TABLE special (k INTEGER, ${typedCols})`);
  await run(`INSERT INTO special SELECT row_number() OVER () AS k, * FROM (VALUES ${typedRows})`);
  await run(`INSERT INTO typed SELECT * EXCLUDE (k) FROM special WHERE k <= 6 ORDER BY k`);
  await run(`INSERT INTO typed SELECT 'fill-' || n, n / 16, -45, 0.5, 2, 3, 4, 5, 6, true, 17, 1 FROM range(4096) r(n) ORDER BY n`);
  await run(`INSERT INTO typed SELECT * EXCLUDE (k) FROM special WHERE k > 6 ORDER BY k`);
  for (const [file, codec] of [['types_snappy.parquet', 'snappy'], ['types_zstd.parquet', 'zstd'], ['types_gzip.parquet', 'gzip']]) {
    await run(`COPY (SELECT * FROM typed) TO '${file}' (FORMAT parquet, COMPRESSION ${codec}, ROW_GROUP_SIZE 2048)`);
  }

  // Integer ids: signed INT64 and unsigned INT64 (the largest UBIGINT).
  await run(`COPY (SELECT * FROM (VALUES (-7::BIGINT, 1.0::DOUBLE, 2.0::DOUBLE), (9223372036854775807::BIGINT, 3.0::DOUBLE, 4.0::DOUBLE)) t(id, ra, dec))
    TO 'int_id.parquet' (FORMAT parquet)`);
  await run(`COPY (SELECT * FROM (VALUES (18446744073709551615::UBIGINT, 1.0::DOUBLE, 2.0::DOUBLE), (42::UBIGINT, 3.0::DOUBLE, 4.0::DOUBLE)) t(id, ra, dec))
    TO 'uint_id.parquet' (FORMAT parquet)`);

  // A DECIMAL ra (INT32 with a DECIMAL logical type), which the reader
  // refuses rather than read as scaled integers.
  await run(`COPY (SELECT 'dz-1' AS id, 12.5::DECIMAL(9,6) AS ra, 1.0::DOUBLE AS dec) TO 'decimal_ra.parquet' (FORMAT parquet)`);

  // Units and UCDs from the key-value metadata: plx_a 1500 uas = 1.5 mas.
  const yamlSQL = unitsYAML.replace(/'/g, "''");
  await run(`COPY (SELECT * FROM (VALUES (501::BIGINT, 20.0::DOUBLE, 30.0::DOUBLE, 1500.0::DOUBLE, 4.5::DOUBLE),
    (502::BIGINT, 21.0::DOUBLE, 31.0::DOUBLE, 250.0::DOUBLE, -2.0::DOUBLE))
    t(star_ref, alpha, delta, plx_a, pm_ra))
    TO 'units.parquet' (FORMAT parquet, KV_METADATA {table_meta_yaml: '${yamlSQL}'})`);

  // The same catalog as CSV and Parquet.
  fs.writeFileSync('same.csv', sameCatalog());
  await run(`COPY (SELECT * FROM read_csv('same.csv', header = true, columns = {'id': 'VARCHAR', 'ra': 'DOUBLE',
    'dec': 'DOUBLE', 'parallax': 'DOUBLE', 'parallax_err': 'DOUBLE', 'pm_ra': 'DOUBLE', 'pm_dec': 'DOUBLE',
    'fit_residual': 'DOUBLE', 'mag': 'DOUBLE'})) TO 'same.parquet' (FORMAT parquet, COMPRESSION zstd, ROW_GROUP_SIZE 100)`);

  // Broken files, cut from types_snappy.parquet: the first half only
  // (truncated), and the footer length (the 4 bytes before the closing
  // magic) overwritten with 0x7fffffff (broken footer).
  const whole = fs.readFileSync('types_snappy.parquet');
  fs.writeFileSync('truncated.parquet', whole.subarray(0, Math.floor(whole.length / 2)));
  const broken = Buffer.from(whole);
  broken.writeUInt32LE(0x7fffffff, broken.length - 8);
  fs.writeFileSync('broken_footer.parquet', broken);
}

main().catch((e) => { console.error(e); process.exit(1); });
