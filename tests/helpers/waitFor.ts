/** Polls a condition every 10 ms; the deadline only bounds a failure, it never decides a pass. */
export async function waitFor(check: () => boolean, timeoutMs: number, what: () => string = () => 'condition'): Promise<void> {
  const deadline = Date.now() + timeoutMs;
  while (!check()) {
    if (Date.now() > deadline) throw new Error(`timed out waiting for ${what()}`);
    await new Promise((r) => setTimeout(r, 10));
  }
}
