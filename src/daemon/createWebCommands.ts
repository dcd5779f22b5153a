import type { AlarmInput } from '../alarms/alarmInput.js';
import type { SiteConfig } from '../config/schema.js';
import type { CommandResult, WebCommands } from '../web/webPorts.js';
import type { MonitorCore } from './monitorCore.js';

/** The web's write side: every action goes through the alarm engine, so it is audited and notified. */
export function createWebCommands(config: SiteConfig, core: MonitorCore, now: () => number): WebCommands {
  const loopIds = new Set(config.loops.map((loop) => loop.id));
  const run = (input: AlarmInput, alsoInTransaction?: () => void): CommandResult => {
    const result = core.alarmAction(input, now(), alsoInTransaction);
    return result.error ? { ok: false, code: result.error.code, message: result.error.message } : { ok: true };
  };
  const needLoop = (loopId: string): CommandResult | null =>
    loopIds.has(loopId) ? null : { ok: false, code: 'PW_LOOP_NOT_FOUND', message: `no loop has id "${loopId}"` };
  return {
    acknowledge: (alarmId, actor, note, spendLink) =>
      run(
        { kind: 'ack', alarmId, actor, note },
        spendLink &&
          (() => {
            // The caller checked the link unspent with nothing awaited since; a spent one here means the
            // check was skipped, and throwing rolls the acknowledgement back with it.
            if (!spendLink()) throw Object.assign(new Error('this acknowledge link has been used already'), { code: 'PW_ACK_LINK_USED' });
          }),
      ),
    shelve: (alarmId, actor, minutes, reason) => run({ kind: 'shelve', alarmId, actor, durationMs: Math.round(minutes * 60_000), reason }),
    unshelve: (alarmId, actor) => run({ kind: 'unshelve', alarmId, actor }),
    takeOutOfService: (loopId, actor, note) => needLoop(loopId) ?? run({ kind: 'out-of-service', loopId, actor, note }),
    returnToService: (loopId, actor, note) => needLoop(loopId) ?? run({ kind: 'return-to-service', loopId, actor, note }),
  };
}
