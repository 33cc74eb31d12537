// Runs one SQL query (read from a file) in DuckDB in memory and prints the result as JSON: its
// single row as an object, or with --all every row as an array of objects.
import { readFileSync } from 'node:fs';
import { DuckDBInstance } from '@duckdb/node-api';

const sql = readFileSync(process.argv[2], 'utf8');
const all = process.argv.includes('--all');
const instance = await DuckDBInstance.create(':memory:');
const connection = await instance.connect();
const result = await connection.runAndReadAll(sql);
const names = result.columnNames();
const rows = result.getRows().map((row) => {
  const o = {};
  names.forEach((n, i) => {
    const v = row[i];
    o[n] = typeof v === 'bigint' ? Number(v) : v;
  });
  return o;
});
process.stdout.write(JSON.stringify(all ? rows : rows[0]) + '\n');
