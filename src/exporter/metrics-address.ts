import { isIP } from 'node:net';
import { UsageError } from '../errors/usage-error.js';

/** Default `--metrics-port`. */
export const defaultMetricsPort = 9464;
/** Default `--metrics-host`: loopback only, so metrics are not published by accident. */
export const defaultMetricsHost = '127.0.0.1';

/** One DNS label: letters, digits and inner hyphens, at most 63 characters (RFC 1123). */
const hostLabel = '[A-Za-z0-9](?:[A-Za-z0-9-]{0,61}[A-Za-z0-9])?';
const hostName = new RegExp(`^${hostLabel}(?:\\.${hostLabel})*\\.?$`);

/**
 * `--metrics-port P`: a TCP port from 0 to 65535, 0 meaning any free port (the bound one
 * is printed on stderr). A UsageError names the option and the value otherwise.
 */
export function metricsPort(raw: string | undefined): number {
  if (raw === undefined) return defaultMetricsPort;
  const text = raw.trim();
  const port = /^\d{1,5}$/.test(text) ? Number(text) : Number.NaN;
  if (!(port >= 0 && port <= 65_535)) {
    throw new UsageError(
      '--metrics-port',
      raw,
      'is not a port number from 0 to 65535 (0 picks any free port)',
    );
  }
  return port;
}

/**
 * `--metrics-host H`: the address the metrics endpoint binds, an IPv4 or IPv6 address
 * (brackets allowed around IPv6) or a host name, without a port or a scheme. Binding a
 * non-loopback address publishes the metrics to whoever can reach it; that is the user's
 * choice, made explicit by this option. A name that does not resolve to an address of
 * this machine fails when the server starts, with a UsageError on this option too.
 */
export function metricsHost(raw: string | undefined): string {
  if (raw === undefined) return defaultMetricsHost;
  const text = raw.trim();
  const unbracketed = /^\[(.*)\]$/.exec(text)?.[1] ?? text;
  if (isIP(unbracketed) !== 0) return unbracketed;
  if (unbracketed === text && text.length <= 253 && hostName.test(text)) return text;
  throw new UsageError(
    '--metrics-host',
    raw,
    'is not an IP address or host name (no port, no scheme; e.g. 127.0.0.1, ::1 or 0.0.0.0)',
  );
}

/** `host:port` for a URL, with brackets around an IPv6 address. */
export function hostPort(host: string, port: number): string {
  return `${isIP(host) === 6 ? `[${host}]` : host}:${port}`;
}
