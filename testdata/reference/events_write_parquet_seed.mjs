// Writes the small Parquet fuzz seed compare/events/testdata/parquet/small.parquet
// with the npm registry's hyparquet-writer 0.17.0: 24 rows in three row
// groups, a nullable DOUBLE with nulls, a FLOAT, RLE booleans, a STRING.
//
//   npm install --prefix DIR hyparquet-writer@0.17.0
//   node testdata/reference/events_write_parquet_seed.mjs DIR/node_modules OUT.parquet
import { writeFileSync } from 'node:fs'
import { join } from 'node:path'
import { pathToFileURL } from 'node:url'

const [modules, out] = process.argv.slice(2)
const { parquetWriteBuffer } = await import(pathToFileURL(join(modules, 'hyparquet-writer', 'src', 'index.js')).href)
const n = 24
const idx = [...Array(n).keys()]
const buf = parquetWriteBuffer({
  columnData: [
    { name: 'run', data: idx.map(i => 1 + (i >> 3)), type: 'INT32', nullable: false },
    { name: 'event', data: idx.map(i => BigInt(i * 7)), type: 'INT64', nullable: false },
    { name: 'x', data: idx.map(i => i % 5 === 0 ? null : i / 3), type: 'DOUBLE' },
    { name: 'y', data: idx.map(i => i * 0.25), type: 'FLOAT' },
    { name: 'pass', data: idx.map(i => i % 3 !== 0), type: 'BOOLEAN', encoding: 'RLE' },
    { name: 'tag', data: idx.map(i => 't' + i), type: 'STRING' },
  ],
  rowGroupSize: 10,
})
writeFileSync(out, Buffer.from(buf))
