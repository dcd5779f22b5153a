import { execFile } from 'node:child_process';
import { constants, readFileSync } from 'node:fs';
import { access, stat, statfs } from 'node:fs/promises';
import { userInfo } from 'node:os';
import { loadConfig } from '../../config/loadConfig.js';
import { parseLine } from '../../protocol/parseLine.js';
import { openDecoderStream } from './decoderStream.js';
import { verifyWithNodemailer } from './checkSmtp.js';
import { defaultWebPortDeps } from './checkWebPort.js';
import type { DoctorDeps } from './runDoctor.js';

export interface DoctorTiming {
  /** Time allowed for the decoder's first valid line. Default 2000 ms. */
  firstValidWithinMs?: number;
  /** Total listening time per decoder for the clock-drift figure. Default 5000 ms. */
  listenMs?: number;
}

const canDo = (path: string, mode: number) =>
  access(path, mode).then(
    () => true,
    () => false,
  );

/** The real machine: files, serial ports, sockets, the mail server, timedatectl. */
export function createDoctorDeps(timing: DoctorTiming = {}): DoctorDeps {
  return {
    loadConfig,
    decoder: {
      fs: {
        stat: (path) => stat(path),
        access: (path) => access(path, constants.R_OK | constants.W_OK),
        groupName,
        userName: () => {
          try {
            return userInfo().username;
          } catch {
            return `uid ${process.getuid?.() ?? '?'}`;
          }
        },
      },
      open: openDecoderStream,
      parse: parseLine,
      nowUs: () => performance.now() * 1000,
      setTimer: (callback, delayMs) => {
        const handle = setTimeout(callback, delayMs);
        return () => clearTimeout(handle);
      },
      firstValidWithinMs: timing.firstValidWithinMs ?? 2000,
      listenMs: timing.listenMs ?? 5000,
    },
    verifySmtp: verifyWithNodemailer,
    web: defaultWebPortDeps,
    disk: {
      freeBytes: async (folder) => {
        const fsStats = await statfs(folder);
        return fsStats.bavail * fsStats.bsize;
      },
      exists: (path) => canDo(path, constants.F_OK),
      writable: (folder) => canDo(folder, constants.W_OK),
      cwd: () => process.cwd(),
    },
    clock: {
      timedatectl: () =>
        new Promise((resolve) => {
          execFile('timedatectl', ['show', '-p', 'NTPSynchronized', '--value'], { timeout: 3000 }, (err, stdout) => resolve(err ? null : stdout));
        }),
      exists: (path) => canDo(path, constants.F_OK),
    },
  };
}

/** Group name from /etc/group, so a permission fix can name the group to join. */
function groupName(gid: number): string | null {
  try {
    for (const line of readFileSync('/etc/group', 'utf8').split('\n')) {
      const [name, , id] = line.split(':');
      if (name && Number(id) === gid) return name;
    }
  } catch {
    // no /etc/group (not Linux): fall back to the number
  }
  return null;
}
