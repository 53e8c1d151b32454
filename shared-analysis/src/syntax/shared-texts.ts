// The field texts one parse shares: each text read from the netlist is kept as one string, found again by its place
// in the text without a string made for the lookup.

/**
 * Most texts one parse shares: a netlist of millions of distinct fields keeps its own string for each text past
 * this many, so the table stays at most 2^22 slots.
 */
export const MAX_SHARED_TEXTS = 1 << 20;

/** Characters from which a netlist's shared texts are kept in the open table rather than a Map (1 MiB; the 100k-element sink array is 2.4 MB, the 20k one 0.45 MB). */
export const LARGE_TEXT = 1 << 20;

/** Slots looked at for one text before it is given a string of its own (a run of texts whose hashes collide). */
const MAX_PROBES = 32;

/**
 * The texts of the fields met so far, each held once: node, model and value fields repeat from card to card (a node
 * is written on every card that connects to it), and every card is kept for the whole analysis, so each repeat would
 * otherwise keep a string of its own. A text is looked up by its place in the netlist (`of(text, start, end)`): the
 * characters are hashed and compared where they are, and a string is made only for a text not held yet (a repeat
 * costs no string at all, where a lookup in a Map keyed by strings needs the string first).
 *
 * Open addressing with linear probing over two parallel arrays, kept at most half full. A text whose probe runs past
 * `MAX_PROBES` slots (texts made to collide) gets a string of its own and is not held, so no input makes a lookup
 * cost more than that many comparisons; past `limit` texts, new texts are their own strings too. Either way the
 * string returned reads as the text: only whether it is shared changes.
 */
export class SharedTexts {
  private keys: (string | undefined)[];
  private hashes: Int32Array;
  private mask: number;
  /** How many texts are held. */
  size = 0;

  /**
   * The table of a netlist of fewer than `LARGE_TEXT` characters: a Map keyed by each field's string, which costs a
   * string per lookup but no code to compile and warm up (at 20,000 elements the open table's code took longer to get
   * fast than it saves: docs/PERFORMANCE.md, "Parse and elaboration at 100k (2026-12-05, early)").
   */
  private readonly small: Map<string, string> | undefined;

  /** `large`: whether the netlist is large enough for the open table (`LARGE_TEXT`); else a Map. */
  constructor(private readonly limit = MAX_SHARED_TEXTS, large = true) {
    const capacity = large ? 256 : 1;
    this.keys = new Array<string | undefined>(capacity).fill(undefined);
    this.hashes = new Int32Array(capacity);
    this.mask = capacity - 1;
    this.small = large ? undefined : new Map();
  }

  /** The string held for `text.slice(start, end)`; that slice, held from now on when there is room, if none is. */
  of(text: string, start: number, end: number): string {
    const small = this.small;
    if (small !== undefined) {
      const own = text.slice(start, end);
      const shared = small.get(own);
      if (shared !== undefined) return shared;
      if (small.size < this.limit) {
        small.set(own, own);
        this.size++;
      }
      return own;
    }
    // FNV-1a over the UTF-16 code units (32-bit; from memory of its published constants).
    let h = 0x811c9dc5 | 0;
    for (let i = start; i < end; i++) h = Math.imul(h ^ text.charCodeAt(i), 0x01000193);
    const length = end - start;
    const keys = this.keys;
    let slot = h & this.mask;
    for (let probes = 0; ; probes++) {
      const held = keys[slot];
      if (held === undefined) break;
      if (this.hashes[slot] === h && held.length === length && sameText(held, text, start)) return held;
      if (probes >= MAX_PROBES) return text.slice(start, end);
      slot = (slot + 1) & this.mask;
    }
    const own = text.slice(start, end);
    if (this.size >= this.limit) return own;
    keys[slot] = own;
    this.hashes[slot] = h;
    this.size++;
    if (this.size * 2 > this.mask + 1) this.grow();
    return own;
  }

  /** Twice the slots, every held text placed again by its hash. */
  private grow(): void {
    const oldKeys = this.keys;
    const oldHashes = this.hashes;
    const capacity = oldKeys.length * 2;
    const keys = new Array<string | undefined>(capacity).fill(undefined);
    const hashes = new Int32Array(capacity);
    const mask = capacity - 1;
    for (let i = 0; i < oldKeys.length; i++) {
      const key = oldKeys[i];
      if (key === undefined) continue;
      const h = oldHashes[i]!;
      let slot = h & mask;
      while (keys[slot] !== undefined) slot = (slot + 1) & mask;
      keys[slot] = key;
      hashes[slot] = h;
    }
    this.keys = keys;
    this.hashes = hashes;
    this.mask = mask;
  }
}

/** Whether `held` is the text of `text` from `start` on (for `held.length` code units). */
function sameText(held: string, text: string, start: number): boolean {
  for (let i = 0; i < held.length; i++) if (held.charCodeAt(i) !== text.charCodeAt(start + i)) return false;
  return true;
}
