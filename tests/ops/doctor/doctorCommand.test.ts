import { writeFileSync } from 'node:fs';
import type { AddressInfo } from 'node:net';
import { createServer } from 'node:net';
import { join } from 'node:path';
import { afterEach, describe, expect, it } from 'vitest';
import { createDoctorCommand, doctorCommand } from '../../../src/cli/doctorCommand.js';
import { createDoctorDeps } from '../../../src/ops/doctor/defaultDoctorDeps.js';
import { captureCliIo } from '../../helpers/captureCliIo.js';
import { freePort } from '../../helpers/freePort.js';
import { useTempDirs } from '../../helpers/tempDir.js';
import { line } from './protocolLines.js';
import { openPtyPair, type PtyPair } from './ptyDecoder.js';

const tempDir = useTempDirs();

/** `pairwatch doctor` end to end: a real config file, a real pseudo-terminal decoder through serialport. */
const cleanups: Array<() => Promise<void> | void> = [];
afterEach(async () => {
  for (const cleanup of cleanups.splice(0).reverse()) await cleanup();
});

async function siteFile(dir: string, decoderPort: string): Promise<string> {
  const file = join(dir, 'site.yaml');
  writeFileSync(
    file,
    [
      'site: { name: "Test Farm" }',
      'decoders:',
      `  - { id: barn, port: "${decoderPort}", baud: 115200 }`,
      'loops:',
      '  - { id: north-store, name: "North store", decoder: barn, input: 1 }',
      '  - { id: calf-shed, name: "Calf shed", decoder: barn, input: 2 }',
      `storage: { path: "${join(dir, 'data', 'site.db')}" }`,
      `web: { listen: "127.0.0.1:${await freePort()}" }`,
      '',
    ].join('\n'),
  );
  return file;
}

/** Writes a HELLO then a TICK every 100 ms, stamped with a µs clock, as a decoder would. */
function runDecoder(pty: PtyPair): () => void {
  let seq = 0;
  const timeUs = () => Math.round(performance.now() * 1000) % 4294967296;
  pty.write(line('HELLO 1 4 test-fw.1'));
  const timer = setInterval(() => pty.write(line(`TICK ${seq++ % 65536} ${timeUs()} NNNN`)), 100);
  return () => clearInterval(timer);
}

describe('pairwatch doctor', () => {
  it('passes a working pseudo-terminal decoder', async () => {
    const dir = tempDir('pw-doctor-ok-');
    const pty = await openPtyPair(dir);
    cleanups.push(() => pty.close());
    cleanups.push(runDecoder(pty));
    const { io, all: out } = captureCliIo();
    const code = await doctorCommand(['--config', await siteFile(dir, pty.port), '--drift-seconds', '2'], io);
    const text = out();
    expect(text).toMatch(/^ok {4}config: .* valid \(1 decoder, 2 loops\)/m);
    expect(text).toMatch(/^ok {4}decoder barn port: .* exists/m);
    // The HELLO went out before doctor opened the port, as on a decoder that has been running a while:
    // the loop count comes from the TICKs.
    expect(text).toMatch(/^ok {4}decoder barn protocol: speaks protocol v1 .*4 loops/m);
    expect(text).toMatch(/^(ok  |warn)  decoder barn clock drift: .*ppm/m);
    expect(text).toMatch(/^warn  smtp: skipped/m);
    expect(text).toMatch(/^ok {4}web port: .* is free/m);
    expect(text).toMatch(/^ok {4}disk: .* free at /m);
    expect(text).toMatch(/^(ok  |warn)  clock sync: /m);
    expect(text).not.toMatch(/FAIL/);
    expect(code).toBe(0);
  });

  it('gives up on a silent port at the 2 s first-line deadline, not the 5 s listen, with a fix about baud and cable', async () => {
    const dir = tempDir('pw-doctor-silent-');
    const pty = await openPtyPair(dir);
    cleanups.push(() => pty.close());
    const { io, all: out } = captureCliIo();
    // Which deadline ended the look is an event, recorded here; how long it took is not asserted.
    const fired: number[] = [];
    const makeDeps = () => {
      const deps = createDoctorDeps({ listenMs: 5000 });
      const realSetTimer = deps.decoder.setTimer;
      deps.decoder.setTimer = (callback, delayMs) => realSetTimer(() => (fired.push(delayMs), callback()), delayMs);
      return deps;
    };
    const code = await createDoctorCommand(makeDeps)(['--config', await siteFile(dir, pty.port)], io);
    const text = out();
    expect(text).toMatch(/^FAIL {2}decoder barn protocol: .* silent for 2 s/m);
    expect(text).toMatch(/fix: .*baud.*cable/);
    expect(text).not.toMatch(/clock drift/);
    expect(code).toBe(1);
    expect(fired).toEqual([2000]);
  });

  it('fails a missing port and says where to look', async () => {
    const dir = tempDir('pw-doctor-missing-');
    const { io, all: out } = captureCliIo();
    const code = await doctorCommand(['--config', await siteFile(dir, join(dir, 'pairwatch-decoder-barn'))], io);
    const text = out();
    expect(text).toMatch(/^FAIL {2}decoder barn port: .* does not exist/m);
    expect(text).toMatch(/fix: .*USB cable.*pairwatch ports/);
    expect(text).not.toMatch(/decoder barn protocol/);
    expect(code).toBe(1);
  });

  it('reports every config problem and no stack trace', async () => {
    const dir = tempDir('pw-doctor-badconfig-');
    const file = join(dir, 'site.yaml');
    writeFileSync(file, 'site: { name: "X" }\ndecoders: []\nloops: []\nstorage: { path: x.db }\ncolour: blue\n');
    const { io, all: out } = captureCliIo();
    const code = await doctorCommand(['--config', file], io);
    const text = out();
    expect(text).toMatch(/^FAIL {2}config: .* problems:/m);
    expect(text).toContain('colour: unknown key');
    expect(text).toContain('decoders: needs at least one decoder');
    expect(text).not.toMatch(/\n\s+at /);
    expect(code).toBe(1);
  });

  it('warns, not fails, when another program (the running service) holds the port', async () => {
    const dir = tempDir('pw-doctor-busy-');
    const pty = await openPtyPair(dir);
    cleanups.push(() => pty.close());
    const { SerialPort } = await import('serialport');
    const holder = new SerialPort({ path: pty.port, baudRate: 115200, autoOpen: false });
    await new Promise<void>((resolve, reject) => holder.open((err) => (err ? reject(err) : resolve())));
    cleanups.push(() => new Promise<void>((resolve) => holder.close(() => resolve())));
    const { io, all: out } = captureCliIo();
    const code = await doctorCommand(['--config', await siteFile(dir, pty.port)], io);
    expect(out()).toMatch(/^warn  decoder barn protocol: .* is in use by another program/m);
    expect(out()).toContain('systemctl stop pairwatch');
    expect(code).toBe(0);
  });

  it('checks a decoder behind a serial-to-network box (tcp://)', async () => {
    const dir = tempDir('pw-doctor-tcp-');
    let seq = 0;
    const box = createServer((socket) => {
      const timer = setInterval(() => socket.write(line(`TICK ${seq++} ${Math.round(performance.now() * 1000) % 4294967296} NN`)), 100);
      socket.on('close', () => clearInterval(timer));
      socket.on('error', () => clearInterval(timer));
    });
    await new Promise<void>((resolve) => box.listen(0, '127.0.0.1', () => resolve()));
    cleanups.push(() => new Promise<void>((resolve) => box.close(() => resolve())));
    const { io, all: out } = captureCliIo();
    const code = await doctorCommand(['--config', await siteFile(dir, `tcp://127.0.0.1:${(box.address() as AddressInfo).port}`), '--drift-seconds', '2'], io);
    expect(out()).toMatch(/^ok {4}decoder barn port: tcp:\/\/127\.0\.0\.1:\d+ accepted a connection/m);
    expect(out()).toMatch(/^ok {4}decoder barn protocol: speaks protocol v1 .*2 loops/m);
    expect(code).toBe(0);
  });

  it('rejects bad usage with exit 2', async () => {
    const { io, all: out } = captureCliIo();
    expect(await doctorCommand(['--drift-seconds', 'soon'], io)).toBe(2);
    expect(out()).toContain('--drift-seconds must be a number');
    expect(await doctorCommand(['--colour'], io)).toBe(2);
  });
});
