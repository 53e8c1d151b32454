// The field texts one parse shares: each text read from the netlist is kept as one string, found again by its place
// in the text without a string made for the lookup.

/**
 * Most texts one parse shares: a netlist of millions of distinct fields keeps its own string for each text past
 * this many, so the table stays at most 2^22 slots.
 */
export const MAX_SHARED_TEXTS = 1 << 20;

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

  constructor(private readonly limit = MAX_SHARED_TEXTS) {
    this.keys = new Array<string | undefined>(256).fill(undefined);
    this.hashes = new Int32Array(256);
    this.mask = 255;
  }

  /** The string held for `text.slice(start, end)`; that slice, held from now on when there is room, if none is. */
  of(text: string, start: number, end: number): string {
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
