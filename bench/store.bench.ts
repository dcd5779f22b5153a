import { performance } from 'node:perf_hooks';
import Database from 'better-sqlite3';
import type { LoopState } from '../src/model/loopState.js';
import type { EdgeRow } from '../src/store/edgeRepo.js';
import { openStore, type Store } from '../src/store/openStore.js';
import type { NewStateChange } from '../src/store/history.js';
import type { BenchOptions, BenchResult, BenchRow } from './benchTypes.js';
import { loopIdFor } from './support/benchSite.js';
import { median } from './support/percentile.js';
import { makeTempFolder } from './support/tempFolder.js';

/**
 * Write rates through the store's repositories, each beside a plain better-sqlite3 batched insert of
 * the same rows into an identical table (same CREATE statements, same pragmas) in the same run.
 * Rounds alternate repo / plain so both tables grow alike and machine noise hits both.
 */

const TARGET_RATIO = 0.5;
const STATE_BATCH = 500; // the durable writer's catch-up batch size
const EDGE_BATCH = 2000; // the monitor's edge batch (EDGE_BATCH_ROWS)
const START_MS = Date.UTC(2031, 0, 6, 6, 0, 0);
/** PRAGMA synchronous reads back as a number (SQLite documentation, PRAGMA synchronous). */
const SYNCHRONOUS_NAMES = ['OFF', 'NORMAL', 'FULL', 'EXTRA'] as const;

export async function run(opts: BenchOptions): Promise<BenchResult> {
  const rounds = opts.smoke ? 1 : 5;
  const stateRowsPerRound = opts.smoke ? 2_000 : 20_000;
  const edgeRowsPerRound = opts.smoke ? 10_000 : 100_000;
  const singleRowsPerRound = opts.smoke ? 200 : 2_000;
  const folder = makeTempFolder('store');
  const store = openStore({ path: folder.path('repo.db') });
  const plain = openPlainTwin(store, folder.path('plain.db'), ['state_changes', 'edges']);
  try {
    const insertChange = plain.prepare('INSERT INTO state_changes (loop_id, from_state, to_state, decoder_us, at, reason) VALUES (?, ?, ?, ?, ?, ?)');
    const insertEdge = plain.prepare('INSERT INTO edges (decoder_id, input, band, decoder_us, at) VALUES (?, ?, ?, ?, ?)');
    const plainChanges = plain.transaction((rows: readonly NewStateChange[]) => {
      for (const r of rows) insertChange.run(r.loopId, r.from, r.to, r.decoderUs, new Date(r.at).toISOString(), r.reason);
    });
    const plainEdges = plain.transaction((rows: readonly EdgeRow[]) => {
      for (const r of rows) insertEdge.run(r.decoderId, r.input, r.band, r.decoderUs, new Date(r.at).toISOString());
    });

    const rates = { repoChanges: [] as number[], plainChanges: [] as number[], repoEdges: [] as number[], plainEdges: [] as number[], repoSingle: [] as number[], plainSingle: [] as number[] };
    let offset = 0;
    for (let round = 0; round < rounds; round++) {
      const changes = stateChangeRows(stateRowsPerRound, offset);
      const edges = edgeRows(edgeRowsPerRound, offset);
      const singles = stateChangeRows(singleRowsPerRound, offset + stateRowsPerRound);
      offset += stateRowsPerRound + singleRowsPerRound;
      rates.repoChanges.push(rate(changes.length, () => inBatches(changes, STATE_BATCH, (b) => store.transaction(() => b.forEach((r) => store.stateChanges.insert(r))))));
      rates.plainChanges.push(rate(changes.length, () => inBatches(changes, STATE_BATCH, (b) => plainChanges(b))));
      rates.repoEdges.push(rate(edges.length, () => inBatches(edges, EDGE_BATCH, (b) => store.transaction(() => store.edges.insertMany(b)))));
      rates.plainEdges.push(rate(edges.length, () => inBatches(edges, EDGE_BATCH, (b) => plainEdges(b))));
      // How the monitor commits a state change in steady running: one transaction each, committed before anything acts on it.
      rates.repoSingle.push(rate(singles.length, () => singles.forEach((r) => store.transaction(() => store.stateChanges.insert(r)))));
      rates.plainSingle.push(rate(singles.length, () => singles.forEach((r) => plainChanges([r]))));
    }
    const row = (figure: string, repo: number[], base: number[], target: boolean): BenchRow => {
      const value = median(repo);
      const referenceValue = median(base);
      const ratio = value / referenceValue;
      return {
        figure,
        value,
        unit: 'rows/s',
        reference: 'plain better-sqlite3 insert, same rows and batches',
        referenceValue,
        ratio,
        target: target ? `≥ ${TARGET_RATIO}` : null,
        met: target ? ratio >= TARGET_RATIO : null,
      };
    };
    return {
      name: 'store',
      title: 'Store writes',
      rows: [
        row(`state changes via repo, ${STATE_BATCH} per transaction`, rates.repoChanges, rates.plainChanges, true),
        row(`edges via repo, ${EDGE_BATCH} per transaction`, rates.repoEdges, rates.plainEdges, true),
        row('state changes via repo, one transaction each', rates.repoSingle, rates.plainSingle, false),
      ],
      notes: [
        `${rounds} round(s) of ${stateRowsPerRound} state changes, ${edgeRowsPerRound} edges and ${singleRowsPerRound} single-row commits, alternating repo and plain; medians shown.`,
        `Both files: WAL, synchronous=${SYNCHRONOUS_NAMES[store.db.pragma('synchronous', { simple: true }) as number] ?? '?'} (copied from the store's connection), tables created from the store's own CREATE statements.`,
      ],
    };
  } finally {
    plain.close();
    store.close();
    folder.remove();
  }
}

/** A second database with the same pragmas and the same CREATE TABLE / CREATE INDEX text as the store. */
function openPlainTwin(store: Store, path: string, tables: readonly string[]): Database.Database {
  const db = new Database(path);
  db.pragma(`auto_vacuum = ${String(store.db.pragma('auto_vacuum', { simple: true }))}`);
  db.pragma(`journal_mode = ${String(store.db.pragma('journal_mode', { simple: true }))}`);
  db.pragma(`synchronous = ${String(store.db.pragma('synchronous', { simple: true }))}`);
  db.pragma(`foreign_keys = ${String(store.db.pragma('foreign_keys', { simple: true }))}`);
  const placeholders = tables.map(() => '?').join(', ');
  const ddl = store.db
    .prepare(`SELECT sql FROM sqlite_master WHERE tbl_name IN (${placeholders}) AND sql IS NOT NULL ORDER BY type DESC`)
    .pluck()
    .all(...tables) as string[];
  for (const statement of ddl) db.exec(statement);
  return db;
}

function rate(rows: number, work: () => void): number {
  const started = performance.now();
  work();
  return rows / ((performance.now() - started) / 1000);
}

function inBatches<T>(rows: readonly T[], size: number, write: (batch: readonly T[]) => void): void {
  for (let i = 0; i < rows.length; i += size) write(rows.slice(i, i + size));
}

const CYCLE: readonly LoopState[] = ['healthy', 'tripped', 'healthy', 'open', 'healthy', 'shorted'];

function stateChangeRows(count: number, offset: number): NewStateChange[] {
  return Array.from({ length: count }, (_, k) => {
    const i = offset + k;
    const step = Math.floor(i / 64);
    return {
      loopId: loopIdFor((i % 64) + 1),
      from: CYCLE[step % CYCLE.length]!,
      to: CYCLE[(step + 1) % CYCLE.length]!,
      decoderUs: 1_000_000 + i * 250_000,
      at: START_MS + i * 250,
      reason: 'no valid heartbeat pulse for 1500 ms',
    };
  });
}

function edgeRows(count: number, offset: number): EdgeRow[] {
  return Array.from({ length: count }, (_, k) => {
    const i = offset * 5 + k;
    return { decoderId: 'main', input: (i % 64) + 1, band: i % 2 === 0 ? 'H' : 'N', decoderUs: i * 3906, at: START_MS + Math.floor(i * 3.9) };
  });
}
