import type { JudgeSettings } from '../judge/judge-settings.js';
import { MetricsServer } from './metrics-server.js';
import { VerdictMetrics, type ObservedPipeline } from './verdict-metrics.js';

export interface MetricsExporterOptions {
  /** The pipeline whose events and totals become metrics. */
  readonly pipeline: ObservedPipeline;
  /** The judge's settings (null model, spread mode, alpha, persistence, hop). */
  readonly settings: JudgeSettings;
  readonly windowMs: number;
  readonly latenessMs: number;
  /** `--metrics-host`, validated by metricsHost. */
  readonly host: string;
  /** `--metrics-port`, validated by metricsPort; 0 for any free port. */
  readonly port: number;
}

/** A running exporter. */
export interface MetricsExporter {
  readonly metrics: VerdictMetrics;
  readonly server: MetricsServer;
  /** Where to scrape: the bound address (the real port when 0 was asked for). */
  readonly url: string;
  /** Unsubscribes and stops serving. */
  close(): Promise<void>;
}

/**
 * Starts the Prometheus exporter of `watch`: metrics subscribed to the pipeline's events,
 * served on host:port. Rejects with a UsageError when the address cannot be bound.
 */
export async function startMetricsExporter(
  options: MetricsExporterOptions,
): Promise<MetricsExporter> {
  const metrics = new VerdictMetrics(options.pipeline, {
    settings: options.settings,
    windowMs: options.windowMs,
    latenessMs: options.latenessMs,
  });
  let server: MetricsServer;
  try {
    server = await MetricsServer.start({
      host: options.host,
      port: options.port,
      source: {
        metrics: () => metrics.render(),
        contentType: metrics.registry.contentType,
        readiness: () => metrics.readiness(),
      },
    });
  } catch (error) {
    metrics.close();
    throw error;
  }
  return {
    metrics,
    server,
    url: server.url,
    async close() {
      metrics.close();
      await server.close();
    },
  };
}
