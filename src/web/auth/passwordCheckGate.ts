/**
 * Bounds how many password checks run at once. Each scrypt check at the default cost holds about
 * 128 MiB (RFC 7914: 128·N·r bytes), so unbounded parallel sign-ins would exhaust memory; checks past
 * `running` wait in line, and past `waiting` more are turned away (the caller answers 503).
 */
export interface PasswordCheckGate {
  /** Runs `check` when a slot is free; null when the line is full. */
  run<T>(check: () => Promise<T>): Promise<T> | null;
  readonly active: number;
  readonly queued: number;
}

export function createPasswordCheckGate(limits: { running: number; waiting: number }): PasswordCheckGate {
  let active = 0;
  const line: Array<() => void> = [];
  const release = () => {
    active -= 1;
    const next = line.shift();
    if (next) {
      active += 1;
      next();
    }
  };
  return {
    run<T>(check: () => Promise<T>): Promise<T> | null {
      if (active >= limits.running && line.length >= limits.waiting) return null;
      const started = new Promise<void>((resolve) => {
        if (active < limits.running) {
          active += 1;
          resolve();
        } else line.push(resolve);
      });
      return started.then(check).finally(release);
    },
    get active() {
      return active;
    },
    get queued() {
      return line.length;
    },
  };
}
