import { loadScenario } from '../sim/loadScenario.js';
import { runSimulator, type SimulatorRun } from '../sim/runSimulator.js';
import type { OpenTransport } from './linkTypes.js';

/**
 * The simulated decoder run in-process, in real time. It produces protocol lines as bytes would
 * arrive, so everything after the link is the same as for hardware. A scenario that cannot be read
 * makes the connection fail (and be retried), naming the field at fault.
 */
export function simTransport(file: string, speed: number): OpenTransport {
  return async ({ onData, onEnd }) => {
    const scenario = loadScenario(file);
    let closing = false;
    let run: SimulatorRun | null = null;
    // Switched on only after the link has taken this connection, so HELLO is not sent into the void.
    const start = setImmediate(() => {
      if (closing) return;
      run = runSimulator(scenario, { speed, write: (line) => onData(`${line}\n`) });
      void run.done.then(() => {
        if (!closing) onEnd('the simulated decoder stopped');
      });
    });
    return {
      close: async () => {
        closing = true;
        clearImmediate(start);
        run?.stop();
      },
    };
  };
}
