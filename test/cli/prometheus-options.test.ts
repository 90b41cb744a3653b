// The Prometheus source options. Sources: a command line is readable by every user of the
// machine (/proc/PID/cmdline; common practice: secrets never on argv); label names match
// [a-zA-Z_][a-zA-Z0-9_]* (Prometheus data model documentation, from memory); RFC 7617
// section 2: a basic-auth user id cannot contain a colon.
import { chmodSync, mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';
import { readPrometheusOptions } from '../../src/cli/prometheus-options.js';
import { UsageError } from '../../src/errors/usage-error.js';

const dir = mkdtempSync(join(tmpdir(), 'shardwise-prometheus-options-'));
afterAll(() => rmSync(dir, { recursive: true, force: true }));

const base = {
  prometheus: 'http://127.0.0.1:9090',
  series: 'cache_requests_total{job="seat-cache"}',
  'shard-label': 'shard',
};

function failure(values: Record<string, string>, env: NodeJS.ProcessEnv = {}): UsageError {
  try {
    readPrometheusOptions(values, { env });
  } catch (error) {
    expect(error).toBeInstanceOf(UsageError);
    return error as UsageError;
  }
  throw new Error('no usage error');
}

describe('readPrometheusOptions', () => {
  it('is null without --prometheus, and refuses its options alone', () => {
    expect(readPrometheusOptions({}, { env: {} })).toBeNull();
    expect(failure({ series: 'x' }).message).toBe('--series: "x" needs --prometheus URL');
  });

  it('reads the URL, selector and label', () => {
    const parsed = readPrometheusOptions(base, { env: {} })!;
    expect(parsed.connection).toEqual({ url: 'http://127.0.0.1:9090' });
    expect(parsed.selector).toBe(base.series);
    expect(parsed.shardLabel).toBe('shard');
  });

  it.each([
    [{ ...base, prometheus: 'ftp://x' }, '--prometheus'],
    [{ ...base, prometheus: 'not a url' }, '--prometheus'],
    [{ ...base, prometheus: 'http://u:p@host:9090' }, '--prometheus'],
    [{ ...base, series: ' ' }, '--series'],
    [{ ...base, 'shard-label': '1shard' }, '--shard-label'],
    [{ ...base, 'shard-label': 'sh-ard' }, '--shard-label'],
    [{ ...base, 'prometheus-ca': '/etc/hostname' }, '--prometheus-ca'],
  ])('%j fails naming %s', (values, option) => {
    expect(failure(values).option).toBe(option);
  });

  it('never takes a secret from the command line, and never echoes it', () => {
    for (const name of ['prometheus-token', 'prometheus-password']) {
      const error = failure({ ...base, [name]: 'hunter2' });
      expect(error.option).toBe(`--${name}`);
      expect(error.message).not.toContain('hunter2');
      expect(error.message).toMatch(/SHARDWISE_PROMETHEUS_(TOKEN|PASSWORD)/);
    }
    expect(failure({ ...base, prometheus: 'http://u:hunter2@h' }).message).not.toContain('hunter2');
  });

  it('takes a bearer token from the environment or a file, not both', () => {
    const fromEnv = readPrometheusOptions(base, { env: { SHARDWISE_PROMETHEUS_TOKEN: 't1' } })!;
    expect(fromEnv.connection.auth?.kind).toBe('bearer');
    expect(
      fromEnv.connection.auth?.kind === 'bearer' && fromEnv.connection.auth.token.reveal(),
    ).toBe('t1');
    // Plain http: the token crosses the network in clear text, and the run says so.
    expect(fromEnv.warnings.join()).toMatch(/clear text/);
    // Printed, the secret stays hidden.
    expect(JSON.stringify(fromEnv.connection)).not.toContain('t1');
    const file = join(dir, 'token');
    writeFileSync(file, 't2\nignored\n');
    chmodSync(file, 0o600);
    const fromFile = readPrometheusOptions(
      { ...base, 'prometheus-token-file': file },
      { env: {} },
    )!;
    expect(
      fromFile.connection.auth?.kind === 'bearer' && fromFile.connection.auth.token.reveal(),
    ).toBe('t2');
    expect(
      failure({ ...base, 'prometheus-token-file': file }, { SHARDWISE_PROMETHEUS_TOKEN: 't1' })
        .option,
    ).toBe('--prometheus-token-file');
  });

  it('takes basic auth from --prometheus-user and a password from the environment or a file', () => {
    const parsed = readPrometheusOptions(
      { ...base, 'prometheus-user': 'ops' },
      { env: { SHARDWISE_PROMETHEUS_PASSWORD: 'pw' } },
    )!;
    expect(parsed.connection.auth).toMatchObject({ kind: 'basic', user: 'ops' });
    expect(failure({ ...base, 'prometheus-user': 'ops' }).message).toMatch(/needs a password/);
    expect(
      failure({ ...base, 'prometheus-user': 'o:ps' }, { SHARDWISE_PROMETHEUS_PASSWORD: 'pw' })
        .option,
    ).toBe('--prometheus-user');
    const file = join(dir, 'password');
    writeFileSync(file, 'pw2\n');
    chmodSync(file, 0o644);
    const fromFile = readPrometheusOptions(
      { ...base, 'prometheus-user': 'ops', 'prometheus-password-file': file },
      { env: {} },
    )!;
    expect(
      fromFile.connection.auth?.kind === 'basic' && fromFile.connection.auth.password.reveal(),
    ).toBe('pw2');
    // Readable by others: said.
    expect(fromFile.warnings.join()).toMatch(/chmod 600/);
    expect(failure({ ...base, 'prometheus-password-file': file }).message).toMatch(
      /needs --prometheus-user/,
    );
    expect(
      failure(
        { ...base, 'prometheus-user': 'ops' },
        { SHARDWISE_PROMETHEUS_PASSWORD: 'pw', SHARDWISE_PROMETHEUS_TOKEN: 't' },
      ).option,
    ).toBe('--prometheus-user');
  });

  it('reads --prometheus-ca for https', () => {
    const file = join(dir, 'ca.pem');
    writeFileSync(file, '-----BEGIN CERTIFICATE-----\n');
    const parsed = readPrometheusOptions(
      { ...base, prometheus: 'https://prometheus:9090', 'prometheus-ca': file },
      { env: {} },
    )!;
    expect(parsed.connection.ca).toBe('-----BEGIN CERTIFICATE-----\n');
    expect(
      failure({ ...base, prometheus: 'https://p', 'prometheus-ca': join(dir, 'none') }).message,
    ).toMatch(/cannot be read/);
  });
});
