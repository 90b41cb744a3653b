/**
 * Keys come from the wire: untrusted text of any length. What shardwise keeps and shows
 * of a key is at most {@link longestKey} UTF-16 code units; a longer key is cut (never
 * inside a surrogate pair) and marked with `~` and 8 hex digits of its hash, so two long
 * keys with a common prefix stay apart and an operator can see that the key was cut.
 * Control characters and escape sequences are left for each output to escape in its own
 * way: JSON.stringify in the verdict stream, terminalSafe on the screen; keys never become
 * metric labels.
 */
export const longestKey = 128;

const markLength = 9;

/**
 * The key as kept: itself when short enough, else its first code units, `~` and 8 hex
 * digits of `hash` (the caller's hash of the whole key). O(1) for short keys.
 *
 * @example keptKey('perf-1', 0) === 'perf-1'
 * @example keptKey('x'.repeat(500), 0xdeadbeef).endsWith('~deadbeef')
 */
export function keptKey(key: string, hash: number): string {
  if (key.length <= longestKey) return key;
  let cut = longestKey - markLength;
  const last = key.charCodeAt(cut - 1);
  if (last >= 0xd800 && last <= 0xdbff) cut--;
  return `${key.slice(0, cut)}~${(hash >>> 0).toString(16).padStart(8, '0')}`;
}
