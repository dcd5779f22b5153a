import type { CheckResult } from './checkResult.js';
import { failed, passed } from './checkResult.js';

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
