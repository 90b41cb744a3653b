import { Counter, Gauge, type Registry } from 'prom-client';

/**
 * The process metrics the dashboard shows, and nothing more: CPU seconds, resident memory
 * and the start time, read when scraped (a getrusage call and a /proc-free RSS read: a
 * few microseconds). prom-client's default collectors are not used: they add an
 * event-loop histogram and /proc reads to every scrape, and some of their gauges end in
 * `_total`, which `promtool check metrics` rejects (counters alone may carry it).
 * Names follow the Prometheus client conventions for process metrics (common practice).
 */
export function registerProcessMetrics(registry: Registry): void {
  const registers = [registry];
  new Counter({
    name: 'process_cpu_seconds_total',
    help: 'Total user and system CPU time spent in seconds.',
    registers,
    collect() {
      const usage = process.cpuUsage();
      this.reset();
      this.inc((usage.user + usage.system) / 1e6);
    },
  });
  new Gauge({
    name: 'process_resident_memory_bytes',
    help: 'Resident memory size in bytes.',
    registers,
    collect() {
      this.set(process.memoryUsage.rss());
    },
  });
  const started = Date.now() / 1000 - process.uptime();
  new Gauge({
    name: 'process_start_time_seconds',
    help: 'Start time of the process since unix epoch in seconds.',
    registers,
  }).set(Math.round(started));
}
