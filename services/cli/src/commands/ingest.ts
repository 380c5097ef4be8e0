import { basename } from 'node:path';
import { parseArgs } from 'node:util';
import { type CsvFormatInput, ingestCsvFile, loadTagLookup } from '@isentrope/ingest';
import { openDatabase } from '@isentrope/store';
import type { Logger } from 'pino';
import type { Config } from '../config.js';

export const INGEST_USAGE = `Usage: isentrope ingest FILE --source ID [options]
  --source ID          the plant file's CSV source (its layout and time zone are used)
  --layout wide|long   override the source's layout
  --delimiter C        field delimiter (default ",")
  --decimal-comma      values are written "12,5"
  --units-row          the line after the header gives each column's unit
  --time-zone ZONE     IANA zone of timestamps without offset
  --time-format F      try this format first (iso, ymd, dmy, mdy12, mdy, epoch-s, epoch-ms or a luxon format); repeatable
  --keep               leave the file where it is (default: move it to processed/ or rejected/ beside it)
`;

/** `isentrope ingest FILE --source ID`: one CSV file into the database, once (by its SHA-256). */
export async function ingestCommand(
  args: readonly string[],
  config: Config,
  logger: Logger,
): Promise<number> {
  const { values, positionals } = parseArgs({
    args: [...args],
    allowPositionals: true,
    options: {
      source: { type: 'string' },
      layout: { type: 'string' },
      delimiter: { type: 'string' },
      'decimal-comma': { type: 'boolean' },
      'units-row': { type: 'boolean' },
      'time-zone': { type: 'string' },
      'time-format': { type: 'string', multiple: true },
      keep: { type: 'boolean' },
    },
  });
  const file = positionals[0];
  if (file === undefined || values.source === undefined) {
    process.stderr.write(INGEST_USAGE);
    return 2;
  }
  const db = await openDatabase({
    url: config.databaseUrl,
    dataDir: config.dataDir,
    embeddedPort: config.embeddedPostgresPort,
  });
  try {
    const src = await db.pool.query<{
      spec: { layout?: 'wide' | 'long'; timeZone?: string };
      time_zone: string;
      slug: string;
    }>(
      `SELECT so.spec, si.time_zone, si.slug FROM sources so JOIN sites si ON si.id = so.site_id
        WHERE so.slug = $1 AND so.kind = 'csv' AND so.retired_at IS NULL`,
      [values.source],
    );
    const row = src.rows[0];
    if (row === undefined) {
      process.stderr.write(
        `isentrope ingest: no CSV source "${values.source}" in the database; load the plant file first\n`,
      );
      return 2;
    }
    const format: CsvFormatInput = {
      layout:
        values.layout === 'long' || values.layout === 'wide' ? values.layout : (row.spec.layout ?? 'wide'),
      timeZone: values['time-zone'] ?? row.spec.timeZone ?? row.time_zone,
      ...(values.delimiter === undefined ? {} : { delimiter: values.delimiter }),
      ...(values['decimal-comma'] === true ? { decimalComma: true } : {}),
      ...(values['units-row'] === true ? { unitsRow: true } : {}),
      ...(values['time-format'] === undefined ? {} : { timeFormats: values['time-format'] }),
    };
    const result = await ingestCsvFile(file, {
      pool: db.pool,
      source: values.source,
      tags: await loadTagLookup(db.pool, row.slug),
      format,
      ...(values.keep === true ? { processedDir: null, rejectedDir: null } : {}),
    });
    if (result.status === 'done') {
      const { summary, written } = result;
      logger.info(
        { file: basename(file), fileId: result.fileId, ...summary, written },
        `${basename(file)}: ${written.stored} samples stored, ${written.duplicates} already stored (duplicates), ${written.conflicts} refused (conflicting value, first stored value kept), ${summary.quarantined + written.conflicts} quarantined`,
      );
      return 0;
    }
    if (result.status === 'duplicate') {
      logger.info(
        { file: basename(file), fileId: result.fileId },
        `${basename(file)}: already ingested (same SHA-256)`,
      );
      return 0;
    }
    logger.error(
      { file: basename(file), fileId: result.fileId, reason: result.reason },
      `${basename(file)} rejected: ${result.reason}`,
    );
    return 1;
  } finally {
    await db.close();
  }
}
