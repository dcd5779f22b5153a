import type { SqliteDatabase } from './openDatabase.js';
import { BANDS, type Band } from '../model/band.js';
import { checkRowValue } from './storeError.js';
import { fromIso, toIso } from './isoTime.js';

export interface EdgeRow {
  decoderId: string;
  input: number;
  band: Band;
  decoderUs: number;
  /** Host time the edge was received, epoch ms. */
  at: number;
}

export interface EdgeRecord extends EdgeRow {
  id: number;
}

export interface EdgeListQuery {
  decoderId?: string;
  input?: number;
  since?: number;
  until?: number;
  limit: number;
}

export interface EdgeRepo {
  /** One prepared statement run per row; call it inside the caller's transaction so a batch is one commit. */
  insertMany(rows: readonly EdgeRow[]): void;
  list(query: EdgeListQuery): EdgeRecord[];
  count(): number;
}

interface EdgeDbRow {
  id: number;
  decoder_id: string;
  input: number;
  band: string;
  decoder_us: number;
  at: string;
}

export function createEdgeRepo(db: SqliteDatabase): EdgeRepo {
  const insert = db.prepare('INSERT INTO edges (decoder_id, input, band, decoder_us, at) VALUES (?, ?, ?, ?, ?)');
  const list = db.prepare(`
    SELECT * FROM edges
    WHERE (@decoderId IS NULL OR decoder_id = @decoderId)
      AND (@input IS NULL OR input = @input)
      AND (@since IS NULL OR at >= @since)
      AND (@until IS NULL OR at < @until)
    ORDER BY id LIMIT @limit`);
  const count = db.prepare('SELECT count(*) AS n FROM edges').pluck();

  return {
    insertMany(rows) {
      for (const row of rows) insert.run(row.decoderId, row.input, row.band, row.decoderUs, toIso(row.at));
    },
    list(query) {
      const rows = list.all({
        decoderId: query.decoderId ?? null,
        input: query.input ?? null,
        since: query.since === undefined ? null : toIso(query.since),
        until: query.until === undefined ? null : toIso(query.until),
        limit: query.limit,
      }) as EdgeDbRow[];
      return rows.map((row) => ({
        id: row.id,
        decoderId: row.decoder_id,
        input: row.input,
        band: checkRowValue(row.band, BANDS, `edges[${row.id}].band`),
        decoderUs: row.decoder_us,
        at: fromIso(row.at, `edges[${row.id}].at`),
      }));
    },
    count() {
      return count.get() as number;
    },
  };
}
