import type { DropReason } from '../../protocol/frame.js';
import type { CheckResult } from './checkResult.js';
import { failed, passed, warned } from './checkResult.js';
import type { ListenReport } from './listenToDecoder.js';

export interface ProtocolContext {
  checkName: string;
  port: string;
  baud: number;
  /** The highest input any configured loop uses on this decoder. */
  highestInput: number;
  firstValidWithinMs: number;
}

/** Above this share of dropped lines the link is reported as noisy (matches the spirit of "link-noisy"). */
const NOISY_SHARE = 0.05;

/** Did the port speak decoder protocol v1 within the time allowed, and does it have the inputs the config uses? */
export function judgeProtocol(report: ListenReport, context: ProtocolContext): CheckResult {
  const { checkName, port, baud } = context;
  const seconds = (context.firstValidWithinMs / 1000).toFixed(0);
  const baudFix = port.startsWith('tcp://')
    ? 'check the network box\'s serial settings (baud, 8N1) and that the decoder is wired to it'
    : `check the baud rate (the config says ${baud}; pairwatch's decoder firmware speaks 250000) and the USB cable; \`pairwatch ports\` shows which port is the decoder`;

  const total = report.lines.length;
  const valid = report.lines.filter((l) => l.outcome.ok);
  if (valid.length === 0) {
    if (report.endedBy) {
      return failed(checkName, `${port} closed before any valid line: ${report.endedBy}`, `reconnect the decoder; ${baudFix}`);
    }
    if (total === 0) {
      return failed(
        checkName,
        `${port} was silent for ${seconds} s (a decoder sends a TICK at least every 250 ms)`,
        `check that the decoder has power and is connected to this port; ${baudFix}`,
      );
    }
    const first = report.lines[0]!.outcome;
    const why = first.ok ? '' : ` (e.g. ${first.reason}: ${first.detail})`;
    return failed(
      checkName,
      `${total} line${total === 1 ? '' : 's'} from ${port} in ${seconds} s, none of them protocol v1${why}`,
      `garbled lines mostly mean the wrong baud rate: ${baudFix}`,
    );
  }

  let decoderLoops: number | null = null;
  let firmware: string | null = null;
  for (const line of valid) {
    if (!line.outcome.ok) continue;
    const frame = line.outcome.frame;
    if (frame.type === 'HELLO') {
      decoderLoops = frame.loops;
      firmware = frame.firmware;
    } else if (frame.type === 'TICK' && decoderLoops === null) decoderLoops = frame.bands.length;
  }
  const dropped = total - valid.length;
  const reasons = new Map<DropReason, number>();
  for (const line of report.lines) if (!line.outcome.ok) reasons.set(line.outcome.reason, (reasons.get(line.outcome.reason) ?? 0) + 1);
  const droppedText = dropped === 0 ? '' : `; ${dropped} dropped (${[...reasons].map(([r, n]) => `${r} ${n}`).join(', ')})`;
  const about = [
    `first valid line after ${Math.round(report.firstValidAfterMs ?? 0)} ms`,
    `${valid.length} valid in ${(report.listenedMs / 1000).toFixed(1)} s${droppedText}`,
    decoderLoops === null ? null : `${decoderLoops} loop${decoderLoops === 1 ? '' : 's'}`,
    firmware === null ? null : `firmware ${firmware}`,
  ]
    .filter(Boolean)
    .join(', ');

  if (decoderLoops !== null && context.highestInput > decoderLoops) {
    return failed(
      checkName,
      `speaks protocol v1 (${about}) but a loop in the config uses input ${context.highestInput}`,
      `the decoder has ${decoderLoops} inputs: move that loop to an input it has, or check that this is the right decoder`,
    );
  }
  if (dropped / total > NOISY_SHARE) {
    return warned(checkName, `speaks protocol v1 but the link is noisy (${about})`, `check the cable, its routing away from mains and motor cables, and the baud rate (${baud})`);
  }
  return passed(checkName, `speaks protocol v1 (${about})`);
}
