/**
 * A duration in words for notes and summaries: the two largest units, e.g. "3 d 2 h",
 * "5 min 10 s", "750 ms". O(1).
 *
 * Example: describeSpan(266_400_000) === '3 d 2 h'.
 */
export function describeSpan(ms: number): string {
  if (!Number.isFinite(ms)) return String(ms);
  if (ms < 1000) return `${Math.round(ms)} ms`;
  const units: [string, number][] = [
    ['y', 365 * 86_400_000],
    ['d', 86_400_000],
    ['h', 3_600_000],
    ['min', 60_000],
    ['s', 1000],
  ];
  const first = units.findIndex(([, size]) => ms >= size);
  const [name, size] = units[first];
  const whole = Math.floor(ms / size);
  const next = units[first + 1];
  if (next === undefined) return `${whole} ${name}`;
  const rest = Math.floor((ms - whole * size) / next[1]);
  return rest === 0 ? `${whole} ${name}` : `${whole} ${name} ${rest} ${next[0]}`;
}
