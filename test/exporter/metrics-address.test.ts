import { describe, expect, it } from 'vitest';
import { hostPort, metricsHost, metricsPort } from '../../src/exporter/metrics-address.js';
import { UsageError } from '../../src/errors/usage-error.js';

function usageError(run: () => unknown): UsageError {
  try {
    run();
  } catch (error) {
    if (error instanceof UsageError) return error;
    throw error;
  }
  throw new Error('no UsageError');
}

describe('metricsPort', () => {
  it('defaults to 9464 and takes 0..65535', () => {
    expect(metricsPort(undefined)).toBe(9464);
    expect(metricsPort('0')).toBe(0);
    expect(metricsPort('65535')).toBe(65535);
    expect(metricsPort(' 8080 ')).toBe(8080);
  });

  it('rejects anything else, naming the option and the value', () => {
    for (const bad of ['65536', '-1', '80.5', 'http', '', '1e3', '0x50', '99999']) {
      const error = usageError(() => metricsPort(bad));
      expect(error.option).toBe('--metrics-port');
      expect(error.value).toBe(bad);
      expect(error.message).toBe(
        `--metrics-port: ${JSON.stringify(bad)} is not a port number from 0 to 65535 (0 picks any free port)`,
      );
    }
  });
});

describe('metricsHost', () => {
  it('defaults to loopback and takes addresses and host names', () => {
    expect(metricsHost(undefined)).toBe('127.0.0.1');
    expect(metricsHost('0.0.0.0')).toBe('0.0.0.0');
    expect(metricsHost('::1')).toBe('::1');
    expect(metricsHost('[::1]')).toBe('::1');
    expect(metricsHost('localhost')).toBe('localhost');
    expect(metricsHost('metrics.internal.example')).toBe('metrics.internal.example');
  });

  it('rejects ports, schemes, spaces and junk', () => {
    for (const bad of [
      '',
      '127.0.0.1:9464',
      'http://127.0.0.1',
      'my host',
      '[localhost]',
      '-bad',
      'a..b',
      'x'.repeat(300),
    ]) {
      const error = usageError(() => metricsHost(bad));
      expect(error.option).toBe('--metrics-host');
      expect(error.value).toBe(bad);
    }
  });
});

describe('hostPort', () => {
  it('brackets IPv6 addresses', () => {
    expect(hostPort('127.0.0.1', 9464)).toBe('127.0.0.1:9464');
    expect(hostPort('::1', 9464)).toBe('[::1]:9464');
    expect(hostPort('localhost', 1)).toBe('localhost:1');
  });
});
