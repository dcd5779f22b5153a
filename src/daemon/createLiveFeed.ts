import type { LiveEvent, WebLiveFeed } from '../web/webPorts.js';

/** A tiny fan-out for the board's server-sent events; bursts of changes are merged per kind. */
export function createLiveFeed(): WebLiveFeed & { publish(event: LiveEvent): void } {
  const listeners = new Set<(event: LiveEvent) => void>();
  return {
    subscribe(listener) {
      listeners.add(listener);
      return () => listeners.delete(listener);
    },
    publish(event) {
      for (const listener of listeners) {
        try {
          listener(event);
        } catch {
          // A broken subscriber (a closed browser tab) must not stop the others.
          listeners.delete(listener);
        }
      }
    },
  };
}
