import { createServer, type IncomingMessage, type Server, type ServerResponse } from 'node:http';
import type { AddressInfo } from 'node:net';
import { UsageError } from '../errors/usage-error.js';
import { hostPort } from './metrics-address.js';
import type { Readiness } from './readiness.js';

/** What the server serves: metrics text and a readiness answer. */
export interface MetricsSource {
  /** The exposition text of `/metrics`. */
  metrics(): Promise<string>;
  /** Its Content-Type. */
  readonly contentType: string;
  /** The answer of `/readyz`. */
  readiness(): Readiness;
}

export interface MetricsServerOptions {
  /** Address to bind (validated by metricsHost). */
  readonly host: string;
  /** Port to bind, 0 for any free one (validated by metricsPort). */
  readonly port: number;
  readonly source: MetricsSource;
}

/**
 * Limits against slow or greedy clients: an exporter is scraped every few seconds by a
 * handful of servers, so a few hundred connections and short timeouts are plenty.
 */
const maxConnections = 256;
const headersTimeoutMs = 10_000;
const requestTimeoutMs = 15_000;

/**
 * The metrics endpoint over node:http: `GET /metrics` (the registry's text), `/healthz`
 * (200 while the process runs), `/readyz` (200 when the source delivers and windows close
 * on time, 503 with the reasons otherwise). GET and HEAD only; nothing else is served.
 */
export class MetricsServer {
  /** The bound address (the real port when 0 was asked for). */
  readonly host: string;
  readonly port: number;
  private readonly server: Server;

  private constructor(server: Server, host: string, port: number) {
    this.server = server;
    this.host = host;
    this.port = port;
  }

  /** Where to scrape, e.g. http://127.0.0.1:9464/metrics. */
  get url(): string {
    return `http://${hostPort(this.host, this.port)}/metrics`;
  }

  /**
   * Binds and starts serving. A port in use, a port that needs privileges or an address
   * that is not this machine's is a UsageError on the option at fault.
   */
  static async start(options: MetricsServerOptions): Promise<MetricsServer> {
    const source = coalesced(options.source);
    const server = createServer((request, response) => {
      void answer(source, request, response);
    });
    server.maxConnections = maxConnections;
    server.headersTimeout = headersTimeoutMs;
    server.requestTimeout = requestTimeoutMs;
    await new Promise<void>((resolve, reject) => {
      const failed = (error: NodeJS.ErrnoException) => {
        server.removeListener('listening', listening);
        reject(listenError(error, options.host, options.port));
      };
      const listening = () => {
        server.removeListener('error', failed);
        resolve();
      };
      server.once('error', failed);
      server.once('listening', listening);
      server.listen({ host: options.host, port: options.port, exclusive: true });
    });
    const address = server.address() as AddressInfo;
    return new MetricsServer(server, address.address, address.port);
  }

  /** Stops listening and drops open connections (scrapers reconnect elsewhere). */
  async close(): Promise<void> {
    await new Promise<void>((resolve) => {
      this.server.close(() => resolve());
      this.server.closeAllConnections();
    });
  }
}

/**
 * The source with concurrent /metrics renders shared: a request that arrives while the
 * text is being produced gets that same text, begun at most one render (about a
 * millisecond) before it arrived. Scrapes that queue up while the process waits for a CPU
 * (a busy machine) then cost one render instead of one each.
 */
function coalesced(source: MetricsSource): MetricsSource {
  let rendering: Promise<string> | null = null;
  return {
    contentType: source.contentType,
    readiness: () => source.readiness(),
    metrics() {
      if (rendering === null) {
        rendering = source.metrics().finally(() => {
          rendering = null;
        });
      }
      return rendering;
    },
  };
}

async function answer(
  source: MetricsSource,
  request: IncomingMessage,
  response: ServerResponse,
): Promise<void> {
  const path = (request.url ?? '/').split('?', 1)[0];
  if (request.method !== 'GET' && request.method !== 'HEAD') {
    send(response, 405, 'only GET and HEAD are served\n', { Allow: 'GET, HEAD' });
    return;
  }
  try {
    if (path === '/metrics') {
      const text = await source.metrics();
      send(response, 200, text, { 'Content-Type': source.contentType });
    } else if (path === '/healthz') {
      send(response, 200, 'ok\n');
    } else if (path === '/readyz') {
      const state = source.readiness();
      send(response, state.ready ? 200 : 503, state.reasons.join('\n') + '\n');
    } else {
      send(response, 404, 'not found: try /metrics, /healthz or /readyz\n');
    }
  } catch (error) {
    send(response, 500, `cannot produce ${path}: ${(error as Error).message}\n`);
  }
}

function send(
  response: ServerResponse,
  status: number,
  body: string,
  headers: Record<string, string> = {},
): void {
  response.writeHead(status, {
    'Content-Type': 'text/plain; charset=utf-8',
    'Cache-Control': 'no-store',
    'Content-Length': Buffer.byteLength(body),
    ...headers,
  });
  response.end(response.req.method === 'HEAD' ? undefined : body);
}

function listenError(error: NodeJS.ErrnoException, host: string, port: number): Error {
  const where = hostPort(host, port);
  switch (error.code) {
    case 'EADDRINUSE':
      return new UsageError(
        '--metrics-port',
        String(port),
        `is in use on ${host} (choose another port, or 0 for any free one)`,
        { cause: error },
      );
    case 'EACCES':
      return new UsageError(
        '--metrics-port',
        String(port),
        `cannot be bound on ${host} without privileges (choose a port above 1023)`,
        { cause: error },
      );
    case 'EADDRNOTAVAIL':
    case 'ENOTFOUND':
    case 'EAI_AGAIN':
    case 'EAI_NONAME':
      return new UsageError(
        '--metrics-host',
        host,
        `is not an address of this machine (${error.code})`,
        {
          cause: error,
        },
      );
    default:
      return new Error(`cannot serve metrics on ${where} (${error.message})`, { cause: error });
  }
}
