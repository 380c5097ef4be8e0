/**
 * Child process for the kill-and-restart test: ingests one CSV file and prints one JSON
 * line per stored batch ({"samples": n}) so the parent knows when to SIGKILL it.
 * Usage: tsx ingest-child.ts <databaseUrl> <file> <site>
 */
import pg from 'pg';
import { ingestCsvFile } from '../csv/file.js';
import { loadTagLookup } from '../tags.js';

const [url, file, site] = process.argv.slice(2);
if (url === undefined || file === undefined || site === undefined) {
  process.stderr.write('usage: ingest-child.ts <databaseUrl> <file> <site>\n');
  process.exit(2);
}
const pool = new pg.Pool({ connectionString: url, max: 4 });
let samples = 0;
const result = await ingestCsvFile(file, {
  pool,
  source: 'kill-test',
  tags: await loadTagLookup(pool, site),
  batchSize: 10_000,
  onSamples: (batch) => {
    samples += batch.length;
    process.stdout.write(`${JSON.stringify({ samples })}\n`);
  },
});
process.stdout.write(`${JSON.stringify({ status: result.status })}\n`);
await pool.end();
