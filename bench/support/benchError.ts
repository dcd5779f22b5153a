/** A benchmark that could not run (a tool missing, a server that never answered): code plus plain words. */
export class BenchError extends Error {
  constructor(
    readonly code: string,
    message: string,
  ) {
    super(message);
    this.name = 'BenchError';
  }
}
