import { firstOfCombined } from './key-hash.js';

/** Settings of a distinct-key count. */
export interface DistinctKeySettings {
  /** HyperLogLog registers, a power of two from 16 to 65536 (`--key-registers`). */
  readonly registers: number;
}

/** The bias constant alpha_m of HyperLogLog (Flajolet et al. 2007, Fig. 3). */
function biasConstant(registers: number): number {
  if (registers === 16) return 0.673;
  if (registers === 32) return 0.697;
  if (registers === 64) return 0.709;
  return 0.7213 / (1 + 1.079 / registers);
}

const twoTo32 = 4_294_967_296;

/**
 * Distinct keys of one shard in one window: exact while small, then a HyperLogLog sketch
 * (P. Flajolet, E. Fusy, O. Gandouet and F. Meunier, "HyperLogLog: the analysis of a
 * near-optimal cardinality estimation algorithm", AofA 2007).
 *
 * Exact phase: the 53-bit identities of the keys (two independent 32-bit hashes, see
 * key-hash.ts) in an open-addressing table, so the count is exact up to a 53-bit hash
 * collision (about n^2 / 2^54: below 1e-11 at the switch-over size). The table holds at
 * most registers / 16 identities (8 bytes each, at most half full), so it never takes more
 * memory than the registers would; one more key converts it to registers.
 *
 * Sketch phase: `registers` one-byte registers fed by the first 32-bit hash, estimated by
 * the paper's raw estimate with its small-range (linear counting) and large-range
 * corrections. Relative standard error 1.04 / sqrt(registers) (the paper's Theorem 1, for
 * large cardinalities): 1.6% with the default 4096 registers.
 *
 * Memory: at most `registers` bytes plus a small header, whatever the number of keys.
 * Cost per key: O(1) (a table probe, or a register update).
 *
 * @example const d = new DistinctKeys({registers: 4096}); d.add(h); d.count // 1
 */
export class DistinctKeys {
  readonly registers: number;
  private readonly bits: number;
  private readonly exactLimit: number;
  private table: Float64Array | null = new Float64Array(16);
  private stored = 0;
  private sketch: Uint8Array | null = null;

  constructor(settings: DistinctKeySettings) {
    const { registers } = settings;
    if (!Number.isSafeInteger(registers) || registers < 16 || registers > 65_536) {
      throw new RangeError(`registers must be a power of two from 16 to 65536, got ${registers}`);
    }
    const bits = Math.log2(registers);
    if (!Number.isInteger(bits)) {
      throw new RangeError(`registers must be a power of two from 16 to 65536, got ${registers}`);
    }
    this.registers = registers;
    this.bits = bits;
    this.exactLimit = registers / 16;
  }

  /** Standard error of the sketch, 1.04 / sqrt(registers) (Flajolet et al. 2007). */
  get standardError(): number {
    return 1.04 / Math.sqrt(this.registers);
  }

  /** True while the count is exact (up to a 53-bit hash collision). */
  get exact(): boolean {
    return this.sketch === null;
  }

  /** The most identities kept exactly before switching to registers. */
  get exactUpTo(): number {
    return this.exactLimit;
  }

  /** Counts a key by its 53-bit identity (see combinedHash). */
  add(combined: number): void {
    if (this.sketch !== null) {
      this.addToSketch(firstOfCombined(combined));
      return;
    }
    const table = this.table as Float64Array;
    const stored = combined + 1;
    const mask = table.length - 1;
    let at = (combined >>> 0) & mask;
    for (;;) {
      const held = table[at];
      if (held === stored) return;
      if (held === 0) break;
      at = (at + 1) & mask;
    }
    if (this.stored === this.exactLimit) {
      this.toSketch();
      this.addToSketch(firstOfCombined(combined));
      return;
    }
    table[at] = stored;
    this.stored++;
    if (this.stored * 2 > table.length) this.grow();
  }

  /** Distinct keys: exact in the exact phase, the HyperLogLog estimate after. */
  get count(): number {
    if (this.sketch === null) return this.stored;
    const registers = this.registers;
    let sum = 0;
    let zeros = 0;
    for (let at = 0; at < registers; at++) {
      const rank = this.sketch[at];
      sum += 2 ** -rank;
      if (rank === 0) zeros++;
    }
    const raw = (biasConstant(registers) * registers * registers) / sum;
    if (raw <= 2.5 * registers) {
      return zeros > 0 ? registers * Math.log(registers / zeros) : raw;
    }
    if (raw <= twoTo32 / 30) return raw;
    return -twoTo32 * Math.log(1 - raw / twoTo32);
  }

  private addToSketch(hash: number): void {
    const sketch = this.sketch as Uint8Array;
    const index = hash >>> (32 - this.bits);
    const rest = (hash << this.bits) | 0;
    const rank = Math.min(Math.clz32(rest) + 1, 32 - this.bits + 1);
    if (rank > sketch[index]) sketch[index] = rank;
  }

  private toSketch(): void {
    const table = this.table as Float64Array;
    this.sketch = new Uint8Array(this.registers);
    this.table = null;
    for (let at = 0; at < table.length; at++) {
      if (table[at] !== 0) this.addToSketch(firstOfCombined(table[at] - 1));
    }
  }

  private grow(): void {
    const old = this.table as Float64Array;
    const table = new Float64Array(old.length * 2);
    const mask = table.length - 1;
    for (let from = 0; from < old.length; from++) {
      const held = old[from];
      if (held === 0) continue;
      let at = ((held - 1) >>> 0) & mask;
      while (table[at] !== 0) at = (at + 1) & mask;
      table[at] = held;
    }
    this.table = table;
  }
}
