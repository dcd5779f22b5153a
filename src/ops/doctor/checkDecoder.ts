/**
 * The doctor's lines for one decoder, in the order a fault would be found on site: is the device
 * there and may this user open it (`checkDevicePort`, below), does it speak the protocol, and does
 * its clock agree with the host's. A later line runs only when the earlier ones passed.
 */
import type { DecoderConfig } from '../../config/schema.js';
import type { CheckResult } from './checkResult.js';
import { failed, passed, warned } from './checkResult.js';
import { checkClockDrift } from './clockDrift.js';
import { OpenFailure, classifyOpenError, type OpenDecoderStream } from './decoderStream.js';
import { judgeProtocol } from './judgeProtocol.js';
import { listenToDecoder, type LineParser, type SetTimer } from './listenToDecoder.js';

export interface DecoderCheckDeps {
  fs: DevicePortFs;
  open: OpenDecoderStream;
  parse: LineParser;
  nowUs: () => number;
  setTimer: SetTimer;
  /** Time allowed for the first valid line. 2000 ms. */
  firstValidWithinMs: number;
  /** Total time to listen once the decoder answers, for the clock-drift estimate. */
  listenMs: number;
}

/** The port, protocol and clock-drift lines for one decoder. Later checks run only if earlier ones pass. */
export async function checkDecoder(decoder: DecoderConfig, highestInput: number, deps: DecoderCheckDeps): Promise<CheckResult[]> {
  const portName = `decoder ${decoder.id} port`;
  const protocolName = `decoder ${decoder.id} protocol`;
  const driftName = `decoder ${decoder.id} clock drift`;
  const port = decoder.port;

  if (port.startsWith('sim:')) return [passed(portName, `${port} is the built-in simulator; no hardware to check`)];

  const results: CheckResult[] = [];
  if (!port.startsWith('tcp://')) {
    const portResult = await checkDevicePort(portName, port, deps.fs);
    results.push(portResult);
    if (portResult.status === 'fail') return results;
  }

  let stream;
  try {
    stream = await deps.open(port, decoder.baud, deps.firstValidWithinMs);
  } catch (err) {
    const failure = err instanceof OpenFailure ? err : classifyOpenError(err);
    results.push(openFailureResult(failure, port.startsWith('tcp://') ? portName : protocolName, port));
    return results;
  }
  if (port.startsWith('tcp://')) results.push(passed(portName, `${port} accepted a connection`));

  let report;
  try {
    report = await listenToDecoder({
      stream,
      parse: deps.parse,
      firstValidWithinMs: deps.firstValidWithinMs,
      listenMs: deps.listenMs,
      nowUs: deps.nowUs,
      setTimer: deps.setTimer,
    });
  } finally {
    await stream.close().catch(() => undefined);
  }
  const protocol = judgeProtocol(report, { checkName: protocolName, port, baud: decoder.baud, highestInput, firstValidWithinMs: deps.firstValidWithinMs });
  results.push(protocol);
  if (report.firstValidAfterMs !== null) results.push(checkClockDrift(report, { checkName: driftName }));
  return results;
}

function openFailureResult(failure: OpenFailure, name: string, port: string): CheckResult {
  switch (failure.kind) {
    case 'missing':
      return failed(name, `${port} could not be opened: it does not exist (${failure.message})`, MISSING_PORT_FIX);
    case 'denied':
      return failed(name, `${port} could not be opened: permission denied`, 'add the user to the device\'s group (usually dialout): sudo usermod -aG dialout $USER, then log in again');
    case 'busy':
      return warned(
        name,
        `${port} is in use by another program, most likely the running pairwatch service`,
        'to check the decoder itself stop the service first (sudo systemctl stop pairwatch); otherwise see /healthz and the board',
      );
    case 'refused':
    case 'timeout':
      return failed(name, `nothing answered at ${port}: ${failure.message}`, 'check the network box\'s power, address and port, and that nothing else holds its one connection');
    case 'other':
      return failed(name, `${port} could not be opened: ${failure.message}`, 'check decoders[].port and decoders[].baud in the config');
  }
}

export interface DevicePortFs {
  stat(path: string): Promise<{ isCharacterDevice(): boolean; gid: number; mode: number }>;
  /** Resolves when the current user may read and write the path. */
  access(path: string): Promise<void>;
  groupName(gid: number): string | null;
  userName(): string;
}

export const MISSING_PORT_FIX =
  'plug in the decoder\'s USB cable and check the decoder has power; `pairwatch ports` lists attached adapters; ' +
  'a /dev/pairwatch-decoder-… name needs its line in /etc/udev/rules.d/99-pairwatch-decoder.rules';

/** Does a device path exist, is it a serial (character) device, and may this user open it? */
export async function checkDevicePort(checkName: string, path: string, fs: DevicePortFs): Promise<CheckResult> {
  let info: Awaited<ReturnType<DevicePortFs['stat']>>;
  try {
    info = await fs.stat(path);
  } catch (err) {
    const code = (err as NodeJS.ErrnoException).code;
    if (code === 'ENOENT' || code === 'ENOTDIR') return failed(checkName, `${path} does not exist`, MISSING_PORT_FIX);
    return failed(checkName, `${path} cannot be looked at: ${(err as Error).message}`, 'check the path in decoders[].port');
  }
  if (!info.isCharacterDevice()) {
    return failed(checkName, `${path} is not a device (a serial port is a character device)`, 'set decoders[].port to the decoder\'s serial device; `pairwatch ports` lists them');
  }
  const group = fs.groupName(info.gid) ?? `gid ${info.gid}`;
  const mode = (info.mode & 0o777).toString(8).padStart(4, '0');
  const user = fs.userName();
  try {
    await fs.access(path);
  } catch {
    return failed(
      checkName,
      `${path} exists (group ${group}, mode ${mode}) but user ${user} may not open it`,
      `add the user to that group: sudo usermod -aG ${group} ${user}, then log in again (the service account gets dialout from its unit)`,
    );
  }
  return passed(checkName, `${path} exists (group ${group}, mode ${mode}) and user ${user} may open it`);
}
