import { describe, expect, it } from 'vitest';
import { unitRuntime } from '../../bench/serviceSoak.bench.js';

describe('the service soak runs the daemon as the systemd unit does', () => {
  it('reads the Node flags and the environment from deploy/pairwatch.service itself', () => {
    const unit = unitRuntime();
    expect(unit.flags).toEqual(['--max-semi-space-size=1', '--max-old-space-size=256']);
    expect(unit.env).toEqual({ NODE_ENV: 'production', MALLOC_ARENA_MAX: '1' });
  });

  it('takes only the words before the script as flags, and every assignment of every Environment= line', () => {
    const text = [
      '[Service]',
      'Environment=A=1 B=two',
      'EnvironmentFile=-/etc/x/env',
      'Environment=C=3',
      'ExecStart=/usr/bin/node --one --two=2 /opt/x/main.js run --config /etc/x.yaml',
    ].join('\n');
    expect(unitRuntime(text)).toEqual({ flags: ['--one', '--two=2'], env: { A: '1', B: 'two', C: '3' } });
  });

  it('an ExecStart without flags gives none', () => {
    expect(unitRuntime('ExecStart=/usr/bin/node /opt/x/main.js run').flags).toEqual([]);
  });
});
