import type { LineQuality } from '../../src/classify/index.js';
import type { EdgeRow } from '../../src/store/edgeRepo.js';
import type { Store } from '../../src/store/openStore.js';

/**
 * Invented demo-style data: what a year of a healthy 500 ms heartbeat with a few faults looks like in the
 * store. Written through the real repositories so rows have their real shape and size.
 */
export interface YearPlan {
  loops: string[];
  endMs: number;
  days: number;
  /** Raw edges are generated only for this last stretch (older ones would long be gone). */
  edgeHours: number;
  /** Edges per second per loop: a 1 ms pulse every 500 ms gives 4 (N→H and H→N, twice a second). */
  edgesPerSecond: number;
  stateChangesPerDay: number;
}

export interface YearTotals {
  minuteRows: number;
  edges: number;
  stateChanges: number;
  alarms: number;
  audit: number;
  pulses: number;
}

const MIN = 60_000;

function minuteQuality(minuteIndex: number): LineQuality {
  // 120 pulses a minute, intervals 500 ± a few ms; the small variation keeps the sums realistic.
  const wobble = (minuteIndex % 7) - 3;
  const mean = 500 + wobble * 0.5;
  return {
    pulses: 120,
    intervalCount: 120,
    intervalSumMs: 120 * mean,
    intervalSqSumMs: 120 * (mean * mean + 4),
    outOfTolerance: minuteIndex % 97 === 0 ? 1 : 0,
    glitches: minuteIndex % 181 === 0 ? 1 : 0,
    longPulses: 0,
    lostFrames: minuteIndex % 1009 === 0 ? 2 : 0,
  };
}

export function generateYear(store: Store, plan: YearPlan): YearTotals {
  const startMs = plan.endMs - plan.days * 86_400_000;
  const minutes = plan.days * 1440;
  const totals: YearTotals = { minuteRows: 0, edges: 0, stateChanges: 0, alarms: 0, audit: 0, pulses: 0 };
  store.loopStatus.ensureLoops(plan.loops, startMs);

  for (const loopId of plan.loops) {
    for (let day = 0; day < plan.days; day++) {
      store.transaction(() => {
        for (let m = day * 1440; m < (day + 1) * 1440 && m < minutes; m++) {
          const q = minuteQuality(m);
          store.lineQuality.upsertMinute(loopId, startMs + m * MIN, q);
          totals.minuteRows += 1;
          totals.pulses += q.pulses;
        }
        for (let k = 0; k < plan.stateChangesPerDay; k++) {
          const at = startMs + day * 86_400_000 + (k + 1) * Math.floor(86_400_000 / (plan.stateChangesPerDay + 1));
          const tripping = k % 2 === 0;
          store.stateChanges.insert({
            loopId, from: tripping ? 'healthy' : 'tripped', to: tripping ? 'tripped' : 'healthy',
            decoderUs: (at - startMs) * 1000, at, reason: tripping ? 'no heartbeat for 1500 ms' : '3 heartbeats in period',
          });
          totals.stateChanges += 1;
          if (tripping) {
            const id = store.alarms.maxId() + 1;
            store.alarms.upsert({
              id, source: loopId, loopId, condition: 'tripped', priority: 'alarm', state: 'normal', active: false,
              latched: true, policy: 'default', raisedAt: at, clearedAt: at + 600_000, ackedAt: at + 300_000,
              ackedBy: 'ann', note: 'checked the heater', shelvedUntil: null, shelveReason: null, closedAt: at + 600_000,
              escalation: { stepsDone: 1, repeatsDone: 0, nextAt: null, notified: ['office'] },
            });
            totals.alarms += 1;
            for (const action of ['raise', 'acknowledge', 'clear'] as const) {
              store.audit.insert({ at, actor: action === 'acknowledge' ? 'ann' : 'pairwatch', action, alarmId: id, loopId, note: null });
              totals.audit += 1;
            }
          }
        }
      });
    }
  }

  const edgeStart = plan.endMs - plan.edgeHours * 3_600_000;
  const stepMs = 1000 / plan.edgesPerSecond;
  plan.loops.forEach((_loopId, index) => {
    const batch: EdgeRow[] = [];
    const flush = (): void => {
      store.transaction(() => store.edges.insertMany(batch));
      totals.edges += batch.length;
      batch.length = 0;
    };
    for (let t = edgeStart, n = 0; t < plan.endMs; t += stepMs, n++) {
      batch.push({ decoderId: 'office', input: index + 1, band: n % 2 === 0 ? 'H' : 'N', decoderUs: Math.round((t - edgeStart) * 1000), at: Math.floor(t) });
      if (batch.length === 5_000) flush();
    }
    if (batch.length > 0) flush();
  });
  return totals;
}
