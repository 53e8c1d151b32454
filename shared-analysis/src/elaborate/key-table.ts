// A table of string keys to non-negative integers, for the elaborator's table of every element name.

/** Slots looked at for one key before the table is made larger (a run of keys whose hashes collide). */
const MAX_PROBES = 64;

/**
 * String key -> non-negative integer, for the elaborator's table of every element name in a netlist of 50,000 cards
 * or more (100,000 names at 100k elements, each looked up once and added once; a smaller netlist uses a Map). Read through `get` alone by the topology (`ElaboratedNames`), where
 * it answers as the Map it replaces did.
 *
 * Open addressing with linear probing over three parallel arrays (hashes and values typed), kept at most half full,
 * the hash computed from the key's characters: at 100k elements about 20 ms less of the elaboration's CPU than a Map
 * (docs/PERFORMANCE.md, "Parse and elaboration at 100k (2026-12-05, early)"). The hash starts from a seed of the
 * table's own, so names cannot be chosen in advance to collide; a key whose probe still runs past
 * `MAX_PROBES` slots doubles the table while it is less than eight times larger than its keys need, and beyond that
 * the probe goes on (answers stay exact; only the time changes).
 */
export class KeyTable {
  private keys: (string | undefined)[];
  private hashes: Int32Array;
  private values: Int32Array;
  private mask: number;
  private readonly seed: number;
  /** How many keys are held. */
  size = 0;

  constructor() {
    this.keys = new Array<string | undefined>(64).fill(undefined);
    this.hashes = new Int32Array(64);
    this.values = new Int32Array(64);
    this.mask = 63;
    this.seed = (Math.random() * 0x7fffffff) | 0;
  }

  /** The value of `key`, or undefined when it has none. */
  get(key: string): number | undefined {
    const h = this.hash(key);
    const keys = this.keys;
    let slot = h & this.mask;
    for (;;) {
      const held = keys[slot];
      if (held === undefined) return undefined;
      if (this.hashes[slot] === h && held === key) return this.values[slot];
      slot = (slot + 1) & this.mask;
    }
  }

  /** Gives `key` the value `value` (a non-negative integer below 2^31), replacing the one it had. */
  set(key: string, value: number): void {
    const h = this.hash(key);
    for (;;) {
      const keys = this.keys;
      let slot = h & this.mask;
      let probes = 0;
      for (;;) {
        const held = keys[slot];
        if (held === undefined) break;
        if (this.hashes[slot] === h && held === key) {
          this.values[slot] = value;
          return;
        }
        slot = (slot + 1) & this.mask;
        probes++;
      }
      if (probes > MAX_PROBES && this.mask + 1 < 16 * (this.size + 1)) {
        this.grow();
        continue;
      }
      keys[slot] = key;
      this.hashes[slot] = h;
      this.values[slot] = value;
      this.size++;
      if (this.size * 2 > this.mask + 1) this.grow();
      return;
    }
  }

  /** FNV-1a over the key's UTF-16 code units (32-bit; the constants from memory of the published ones), from the table's seed. */
  private hash(key: string): number {
    let h = (0x811c9dc5 ^ this.seed) | 0;
    for (let i = 0; i < key.length; i++) h = Math.imul(h ^ key.charCodeAt(i), 0x01000193);
    return h;
  }

  /** Twice the slots, every key placed again by its hash. */
  private grow(): void {
    const oldKeys = this.keys;
    const oldHashes = this.hashes;
    const oldValues = this.values;
    const capacity = oldKeys.length * 2;
    const keys = new Array<string | undefined>(capacity).fill(undefined);
    const hashes = new Int32Array(capacity);
    const values = new Int32Array(capacity);
    const mask = capacity - 1;
    for (let i = 0; i < oldKeys.length; i++) {
      const key = oldKeys[i];
      if (key === undefined) continue;
      const h = oldHashes[i]!;
      let slot = h & mask;
      while (keys[slot] !== undefined) slot = (slot + 1) & mask;
      keys[slot] = key;
      hashes[slot] = h;
      values[slot] = oldValues[i]!;
    }
    this.keys = keys;
    this.hashes = hashes;
    this.values = values;
    this.mask = mask;
  }
}
