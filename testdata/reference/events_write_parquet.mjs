// Writes testdata/reference/events_a.parquet from events_a.csv with the npm
// registry's hyparquet-writer (an implementation independent of arrow-go),
// so tandem's Parquet reader is checked against a file it did not write.
//
//   npm install --prefix DIR hyparquet-writer@0.17.0
//   node testdata/reference/events_write_parquet.mjs DIR/node_modules testdata/reference/events_a.csv OUT.parquet
//
// Columns: run INT32, event INT64, energy and angle DOUBLE, hits FLOAT,
// trigger INT32 (0/1), quality BOOLEAN written with the RLE encoding,
// fiducial BOOLEAN (plain), note STRING (ignored by tandem); row groups of
// 700 rows so several are read.
import { readFileSync, writeFileSync } from 'node:fs'
import { join } from 'node:path'
import { pathToFileURL } from 'node:url'

const [modules, csvPath, outPath] = process.argv.slice(2)
const pkg = JSON.parse(readFileSync(join(modules, 'hyparquet-writer', 'package.json'), 'utf8'))
const { parquetWriteBuffer } = await import(pathToFileURL(join(modules, 'hyparquet-writer', 'src', 'index.js')).href)

const lines = readFileSync(csvPath, 'utf8').trim().split('\n')
const header = lines[0].split(',')
const rows = lines.slice(1).map(l => l.split(','))
const col = name => rows.map(r => r[header.indexOf(name)])
const bool = v => v === 'True' || v === 'true' || v === '1'

const buf = parquetWriteBuffer({
  columnData: [
    { name: 'run', data: col('run').map(Number), type: 'INT32', nullable: false },
    { name: 'event', data: col('event').map(BigInt), type: 'INT64', nullable: false },
    { name: 'energy', data: col('energy').map(Number), type: 'DOUBLE' },
    { name: 'angle', data: col('angle').map(Number), type: 'DOUBLE', nullable: false },
    { name: 'hits', data: col('hits').map(Number), type: 'FLOAT' },
    { name: 'trigger', data: col('trigger').map(Number), type: 'INT32' },
    { name: 'quality', data: col('quality').map(bool), type: 'BOOLEAN', encoding: 'RLE' },
    { name: 'fiducial', data: col('fiducial').map(bool), type: 'BOOLEAN', encoding: 'PLAIN' },
    { name: 'note', data: rows.map((_, i) => 'n' + (i % 7)), type: 'STRING' },
  ],
  rowGroupSize: 700,
  createdBy: `hyparquet-writer ${pkg.version}`,
})
writeFileSync(outPath, Buffer.from(buf))
console.log(`wrote ${outPath} with hyparquet-writer ${pkg.version} (node ${process.version})`)
