/** How a decoder link stands. `reason` is a plain sentence for logs and the board. */
export interface LinkStatus {
  state: 'connecting' | 'connected' | 'disconnected';
  reason?: string;
}

export interface DecoderLinkOptions {
  /** A device path (/dev/ttyACM0, /dev/serial/by-id/…, COM3), `tcp://host:port`, or `sim:FILE`. */
  port: string;
  /** Serial speed (8N1); ignored for tcp: and sim:. */
  baud: number;
  /** Where a relative `sim:FILE` is looked up (the config file's folder). Default: the working directory. */
  scenarioBaseDir?: string;
  /** Pause between attempts while the decoder is unreachable. Default 1000 ms. */
  reconnectMs?: number;
  /** Simulated seconds per real second for `sim:`. Default 1. */
  simSpeed?: number;
  /** Each line as received, without its LF. */
  onLine(line: string): void;
  /**
   * Over-long lines the link discarded. When absent, each is passed to onLine as OVERLONG_LINE,
   * which the parser drops as `too-long`, so it is counted with the other drops either way.
   */
  onOverlong?(count: number): void;
  /** Called when the state (or the reason) changes; not repeated on every failed retry. */
  onStatus(status: LinkStatus): void;
  /**
   * Where an exception thrown by one of the callbacks above goes. The link keeps running either way;
   * without this handler the error is re-thrown from a microtask, so a bug is never swallowed.
   */
  onCallbackError?(err: unknown): void;
}

export interface DecoderLink {
  /** Stops retrying and closes the port; reports a last 'disconnected' (reason "link closed"). */
  close(): Promise<void>;
}

/** An open connection to a decoder, whatever carries it. */
export interface Transport {
  close(): Promise<void>;
}

export interface TransportHandlers {
  /** Text in which each character is one received byte (latin1). */
  onData(chunk: string): void;
  /** The connection ended by itself (device removed, peer closed), with a plain reason. */
  onEnd(reason: string): void;
}

/** Opens one connection; rejects with an error (described by describeLinkError) when it cannot. */
export type OpenTransport = (handlers: TransportHandlers) => Promise<Transport>;
