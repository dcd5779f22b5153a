import { clearIntermittentBy, enterState, intermittentClearsAtUs } from './loopRun.js';
import type { LoopRun } from './loopRun.js';
import { stateReason } from './stateReason.js';
import { tripDeadlineUs } from './tripDeadline.js';

/**
 * Fires every window that expires by `toUs` while the band stays as it is, each at its exact expiry
 * time, so a state is dated when its window ran out rather than when a later frame revealed it.
 *
 * While the band is H only the short window runs: whether the span is a heartbeat (which would cancel
 * a trip) is known only when it ends, so a trip or an intermittent clear falling inside it waits for
 * endBand, which dates it exactly all the same.
 *
 * Open fires once `toUs` reaches its window's end (held for 200 ms, that instant included); a trip only
 * once `toUs` is past its deadline, because a pulse starting at the deadline itself still counts (see
 * tripDeadlineUs).
 */
export function advanceLoop(run: LoopRun, toUs: number): void {
  const { s, w } = run;
  // Each pass changes the state or the flag, so a few passes always settle; the bound guards odd settings.
  // Stryker disable next-line EqualityOperator,UpdateOperator: every pass returns or changes the state or flag, so the bound is never reached
  for (let pass = 0; pass < 6; pass++) {
    if (s.band === null || s.bandSinceUs === null) return;

    if (s.band === 'H') {
      if (s.state === 'shorted') return;
      const shortAtUs = s.bandSinceUs + w.shortUs;
      if (shortAtUs > toUs) return;
      clearIntermittentBy(run, shortAtUs);
      enterState(run, 'shorted', shortAtUs, stateReason.shorted(w.shortUs));
      continue;
    }

    let faultAtUs: number | null = null;
    if (s.band === 'O' && s.state !== 'open') faultAtUs = s.bandSinceUs + w.openUs;
    const deadlineUs = s.band === 'N' && s.state !== 'tripped' ? tripDeadlineUs(run) : null;
    // A window that ran out while the band was O only trips once the band is N again.
    if (deadlineUs !== null) faultAtUs = Math.max(deadlineUs, s.bandSinceUs);
    const clearsAtUs = intermittentClearsAtUs(run);

    if (clearsAtUs !== null && clearsAtUs <= toUs && (faultAtUs === null || clearsAtUs <= faultAtUs)) {
      clearIntermittentBy(run, clearsAtUs);
      continue;
    }
    if (faultAtUs === null) return;
    const due = s.band === 'O' ? faultAtUs <= toUs : faultAtUs < toUs;
    if (!due) return;
    if (s.band === 'O') enterState(run, 'open', faultAtUs, stateReason.open(w.openUs));
    else enterState(run, 'tripped', faultAtUs, stateReason.tripped(w.tripUs));
  }
}
