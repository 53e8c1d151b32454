// Fill-reducing orderings for the sparse LU: approximate minimum degree on the symmetric pattern of A + Aᵀ.

/**
 * A symmetric adjacency structure in compressed form: the neighbours of vertex `v`
 * are `index[start[v] .. start[v + 1])`. Self-loops are never listed.
 */
export interface SymmetricGraph {
  n: number;
  start: Int32Array;
  index: Int32Array;
}

/** Options of {@link approximateMinimumDegree}. */
export interface MinimumDegreeOptions {
  /**
   * A vertex with more neighbours than this is set aside before the elimination and
   * ordered last (a supply rail shared by thousands of devices, for instance). The
   * default is max(16, 10·√n), the rule given with the published algorithm.
   */
  denseThreshold?: number;
}

/**
 * The pattern of A + Aᵀ without the diagonal, duplicates merged, from a list of
 * (row, col) entries of an n×n matrix. Entries outside 0..n-1 are skipped.
 */
export function symmetricPattern(n: number, rows: ArrayLike<number>, cols: ArrayLike<number>): SymmetricGraph {
  const count = new Int32Array(n + 1);
  const m = Math.min(rows.length, cols.length);
  for (let k = 0; k < m; k++) {
    const i = rows[k];
    const j = cols[k];
    if (i === j || !(i >= 0 && i < n && j >= 0 && j < n)) continue;
    count[i + 1]++;
    count[j + 1]++;
  }
  for (let v = 0; v < n; v++) count[v + 1] += count[v];
  const fill = count.slice(0, n);
  const raw = new Int32Array(count[n]);
  for (let k = 0; k < m; k++) {
    const i = rows[k];
    const j = cols[k];
    if (i === j || !(i >= 0 && i < n && j >= 0 && j < n)) continue;
    raw[fill[i]++] = j;
    raw[fill[j]++] = i;
  }
  // Remove duplicates (an entry listed as both (i, j) and (j, i) appears twice) with a last-seen marker.
  const seen = new Int32Array(n).fill(-1);
  const start = new Int32Array(n + 1);
  let out = 0;
  for (let v = 0; v < n; v++) {
    start[v] = out;
    for (let p = count[v]; p < count[v + 1]; p++) {
      const w = raw[p];
      if (seen[w] === v) continue;
      seen[w] = v;
      raw[out++] = w;
    }
  }
  start[n] = out;
  return { n, start, index: raw.slice(0, out) };
}

/**
 * Approximate minimum degree ordering (P. R. Amestoy, T. A. Davis, I. S. Duff,
 * "An approximate minimum degree ordering algorithm", SIAM J. Matrix Anal. Appl.
 * 17(4), 1996): elimination on the quotient graph with approximate external degrees,
 * element absorption (including aggressive absorption), indistinguishable-variable
 * detection by hashing and mass elimination. Dense vertices are ordered last.
 *
 * Returns `perm` with `perm[k]` = the vertex eliminated k-th. Runs without recursion.
 */
export function approximateMinimumDegree(graph: SymmetricGraph, options: MinimumDegreeOptions = {}): Int32Array {
  const { n, start, index } = graph;
  const perm = new Int32Array(n);
  if (n === 0) return perm;
  const denseThreshold = options.denseThreshold ?? Math.max(16, Math.floor(10 * Math.sqrt(n)));

  // Per-vertex state. status: 0 live variable, 1 live element, 2 absorbed (dead), 3 dense (set aside).
  const status = new Uint8Array(n);
  const nv = new Int32Array(n).fill(1);
  const deg = new Int32Array(n);
  // Variable adjacency A_i lives in place in a copy of the input (it only ever shrinks).
  const adj = index.slice();
  const adjStart = start.subarray(0, n);
  const adjLen = new Int32Array(n);
  // E_i (elements adjacent to variable i) and L_e (variables of element e) live in two pools of
  // integers rather than in millions of small arrays, which would keep the garbage collector busy.
  const elems = new ListPool(n, 2, (v) => status[v] === 0);
  const elemVars = new ListPool(n, 0, (e) => status[e] === 1);
  const elemWeight = new Int32Array(n);
  const members: (number[] | null)[] = new Array(n).fill(null);

  let nDense = 0;
  for (let v = 0; v < n; v++) {
    adjLen[v] = start[v + 1] - start[v];
    if (adjLen[v] > denseThreshold) {
      status[v] = 3;
      nDense++;
    }
  }
  // Initial degrees count only non-dense neighbours; dense ones are dropped from the lists.
  for (let v = 0; v < n; v++) {
    if (status[v] === 3) continue;
    const s = adjStart[v];
    let len = 0;
    for (let p = s; p < s + adjLen[v]; p++) {
      const w = adj[p];
      if (status[w] !== 3) adj[s + len++] = w;
    }
    adjLen[v] = len;
    deg[v] = len;
  }

  // Degree buckets: doubly linked lists by degree.
  const head = new Int32Array(n + 1).fill(-1);
  const next = new Int32Array(n).fill(-1);
  const prev = new Int32Array(n).fill(-1);
  const inBucket = new Uint8Array(n);
  const insert = (v: number, d: number): void => {
    const h = head[d];
    next[v] = h;
    prev[v] = -1;
    if (h >= 0) prev[h] = v;
    head[d] = v;
    inBucket[v] = 1;
  };
  const remove = (v: number): void => {
    if (!inBucket[v]) return;
    const a = prev[v];
    const b = next[v];
    if (a >= 0) next[a] = b;
    else head[deg[v]] = b;
    if (b >= 0) prev[b] = a;
    inBucket[v] = 0;
  };
  let mindeg = n;
  for (let v = 0; v < n; v++) {
    if (status[v] !== 0) continue;
    insert(v, deg[v]);
    if (deg[v] < mindeg) mindeg = deg[v];
  }

  const mark = new Int32Array(n); // membership of the current L_p
  let stamp = 0;
  const wStamp = new Int32Array(n); // |L_e \ L_p| computed for the current pivot
  const wVal = new Int32Array(n);
  let wCur = 0;
  const setMark = new Int32Array(n); // set comparison during supervariable detection
  let setCur = 0;
  const hash = new Int32Array(n);
  const hashHead = new Int32Array(n).fill(-1);
  const hashNext = new Int32Array(n).fill(-1);
  let lp = new Int32Array(Math.max(16, denseThreshold * 2));

  let pos = 0;
  const emit = (v: number): void => {
    perm[pos++] = v;
    const list = members[v];
    if (list) for (const w of list) perm[pos++] = w;
    members[v] = null;
  };

  const nLive = n - nDense;
  let nel = 0;
  while (nel < nLive) {
    while (mindeg < n && head[mindeg] < 0) mindeg++;
    if (mindeg >= n + 1 || head[mindeg] < 0) break; // cannot happen: every live variable is in a bucket
    const p = head[mindeg];
    remove(p);

    // Build L_p: the variables reached through p's elements and p's own variable neighbours.
    stamp++;
    mark[p] = stamp;
    let lpLen = 0;
    let lpWeight = 0;
    const epStart = elems.start[p];
    const epEnd = epStart + elems.len[p];
    for (let r = epStart; r < epEnd; r++) {
      const e = elems.data[r];
      if (status[e] !== 1) continue;
      const le = elemVars.data;
      const leEnd = elemVars.start[e] + elemVars.len[e];
      for (let t = elemVars.start[e]; t < leEnd; t++) {
        const i = le[t];
        if (status[i] !== 0 || nv[i] === 0 || mark[i] === stamp) continue;
        mark[i] = stamp;
        if (lpLen === lp.length) lp = grow(lp);
        lp[lpLen++] = i;
        lpWeight += nv[i];
      }
      status[e] = 2;
      elemVars.clear(e);
    }
    {
      const s = adjStart[p];
      for (let t = s; t < s + adjLen[p]; t++) {
        const i = adj[t];
        if (status[i] !== 0 || nv[i] === 0 || mark[i] === stamp) continue;
        mark[i] = stamp;
        if (lpLen === lp.length) lp = grow(lp);
        lp[lpLen++] = i;
        lpWeight += nv[i];
      }
    }
    status[p] = 1;
    elems.clear(p);
    adjLen[p] = 0;
    emit(p);
    nel += nv[p];

    for (let t = 0; t < lpLen; t++) remove(lp[t]);

    // |L_e \ L_p| for every element touching L_p, weighted by supervariable size.
    wCur++;
    for (let t = 0; t < lpLen; t++) {
      const i = lp[t];
      const ei = elems.data;
      const w = nv[i];
      const eEnd = elems.start[i] + elems.len[i];
      for (let r = elems.start[i]; r < eEnd; r++) {
        const e = ei[r];
        if (status[e] !== 1) continue;
        if (wStamp[e] !== wCur) {
          wStamp[e] = wCur;
          wVal[e] = elemWeight[e];
        }
        wVal[e] -= w;
      }
    }

    // Update each variable of L_p: element list, variable list, approximate degree, hash.
    for (let t = 0; t < lpLen; t++) {
      const i = lp[t];
      const list = elems.data;
      const base = elems.start[i];
      const count = elems.len[i];
      let kept = 0;
      let external = 0;
      let h = p;
      for (let r = base; r < base + count; r++) {
        const e = list[r];
        if (status[e] !== 1) continue;
        const we = wVal[e];
        if (we <= 0) {
          // Aggressive absorption: L_e lies inside L_p.
          status[e] = 2;
          elemVars.clear(e);
          continue;
        }
        list[base + kept++] = e;
        external += we;
        h += e;
      }
      elems.len[i] = kept;
      elems.push(i, p);
      const s = adjStart[i];
      let len = 0;
      let aw = 0;
      for (let q = s; q < s + adjLen[i]; q++) {
        const j = adj[q];
        if (status[j] !== 0 || nv[j] === 0 || mark[j] === stamp) continue;
        adj[s + len++] = j;
        aw += nv[j];
        h += j;
      }
      adjLen[i] = len;
      let d = aw + (lpWeight - nv[i]) + external;
      const bound = deg[i] + lpWeight - nv[i];
      if (bound < d) d = bound;
      const cap = nLive - nel - nv[i];
      if (cap < d) d = cap;
      deg[i] = d < 0 ? 0 : d;
      hash[i] = h % n;
    }

    // Indistinguishable variables (same elements, same variable neighbours) merge into one supervariable.
    for (let t = 0; t < lpLen; t++) {
      const i = lp[t];
      const h = hash[i];
      hashNext[i] = hashHead[h];
      hashHead[h] = i;
    }
    for (let t = 0; t < lpLen; t++) {
      const h = hash[lp[t]];
      let i = hashHead[h];
      if (i < 0) continue;
      hashHead[h] = -1;
      for (; i >= 0; i = hashNext[i]) {
        if (nv[i] === 0) continue;
        const ed = elems.data;
        const eiStart = elems.start[i];
        const eiLen = elems.len[i];
        const ai = adjLen[i];
        setCur++;
        for (let r = eiStart; r < eiStart + eiLen; r++) setMark[ed[r]] = setCur;
        for (let q = adjStart[i]; q < adjStart[i] + ai; q++) setMark[adj[q]] = setCur;
        for (let j = hashNext[i]; j >= 0; j = hashNext[j]) {
          if (nv[j] === 0 || elems.len[j] !== eiLen || adjLen[j] !== ai) continue;
          let same = true;
          const ejStart = elems.start[j];
          for (let r = ejStart; r < ejStart + eiLen; r++) if (setMark[ed[r]] !== setCur) { same = false; break; }
          if (same) {
            for (let q = adjStart[j]; q < adjStart[j] + ai; q++) if (setMark[adj[q]] !== setCur) { same = false; break; }
          }
          if (!same) continue;
          nv[i] += nv[j];
          deg[i] -= nv[j];
          if (deg[i] < 0) deg[i] = 0;
          const list = members[i] ?? (members[i] = []);
          list.push(j);
          const sub = members[j];
          if (sub) for (const w of sub) list.push(w);
          members[j] = null;
          nv[j] = 0;
          status[j] = 2;
          elems.clear(j);
          adjLen[j] = 0;
        }
      }
    }

    // Mass elimination: a variable whose only neighbour is the new element goes right after p.
    let weight = lpWeight;
    let keep = 0;
    for (let t = 0; t < lpLen; t++) {
      const i = lp[t];
      if (nv[i] === 0) continue;
      if (adjLen[i] === 0 && elems.len[i] === 1) {
        emit(i);
        nel += nv[i];
        weight -= nv[i];
        status[i] = 2;
        elems.clear(i);
        nv[i] = 0;
        continue;
      }
      lp[keep++] = i;
    }
    elemWeight[p] = weight;
    elemVars.assign(p, lp, keep);
    for (let t = 0; t < keep; t++) {
      const i = lp[t];
      let d = deg[i];
      const cap = nLive - nel - nv[i];
      if (d > cap) d = cap < 0 ? 0 : cap;
      deg[i] = d;
      insert(i, d);
      if (d < mindeg) mindeg = d;
    }
  }

  // Dense vertices last, in order of increasing original degree.
  const dense: number[] = [];
  for (let v = 0; v < n; v++) if (status[v] === 3) dense.push(v);
  dense.sort((a, b) => start[a + 1] - start[a] - (start[b + 1] - start[b]) || a - b);
  for (const v of dense) perm[pos++] = v;
  // Safety net: anything not yet ordered (should not happen) keeps its natural place at the end.
  if (pos < n) {
    const placed = new Uint8Array(n);
    for (let k = 0; k < pos; k++) placed[perm[k]] = 1;
    for (let v = 0; v < n; v++) if (!placed[v]) perm[pos++] = v;
  }
  return perm;
}

/**
 * Many short integer lists in one array, each with its own start, length and capacity. A list
 * that outgrows its room moves to the end; when the array is full, the lists still alive are
 * packed into a fresh array twice the size they need (the workspace compaction of the paper).
 */
class ListPool {
  data: Int32Array<ArrayBuffer>;
  readonly start: Int32Array;
  readonly len: Int32Array;
  readonly cap: Int32Array;
  private end = 0;

  constructor(
    private readonly n: number,
    initialCapacity: number,
    private readonly alive: (list: number) => boolean,
  ) {
    this.start = new Int32Array(n);
    this.len = new Int32Array(n);
    this.cap = new Int32Array(n).fill(initialCapacity);
    // At least n free slots beyond what is in use, so compactions (O(n) each) are amortised over n appends.
    this.data = new Int32Array(n * initialCapacity + n + 16);
    for (let i = 0; i < n; i++) {
      this.start[i] = this.end;
      this.end += initialCapacity;
    }
  }

  clear(i: number): void {
    this.len[i] = 0;
  }

  /** Appends v to list i. */
  push(i: number, v: number): void {
    if (this.len[i] === this.cap[i]) this.relocate(i, 2 * this.cap[i] + 2);
    this.data[this.start[i] + this.len[i]++] = v;
  }

  /** Makes list i a copy of src[0..count). */
  assign(i: number, src: Int32Array, count: number): void {
    if (count > this.cap[i]) this.relocate(i, count, false);
    this.data.set(src.subarray(0, count), this.start[i]);
    this.len[i] = count;
  }

  private relocate(i: number, capacity: number, keep = true): void {
    if (this.end + capacity > this.data.length) this.compact(capacity, i);
    const from = this.start[i];
    const to = this.end;
    if (keep) this.data.copyWithin(to, from, from + this.len[i]);
    this.start[i] = to;
    this.cap[i] = capacity;
    this.end += capacity;
  }

  private compact(extra: number, moving: number): void {
    let need = extra;
    for (let i = 0; i < this.n; i++) {
      if (i === moving || this.alive(i)) need += this.len[i];
      else this.cap[i] = 0;
    }
    const fresh = new Int32Array(Math.max(this.data.length, 2 * need + this.n + 16));
    let at = 0;
    for (let i = 0; i < this.n; i++) {
      if (this.cap[i] === 0 && i !== moving) {
        this.start[i] = at;
        this.len[i] = 0;
        continue;
      }
      const l = this.len[i];
      fresh.set(this.data.subarray(this.start[i], this.start[i] + l), at);
      this.start[i] = at;
      this.cap[i] = l;
      at += l;
    }
    this.data = fresh;
    this.end = at;
  }
}

function grow(a: Int32Array<ArrayBuffer>): Int32Array<ArrayBuffer> {
  const bigger = new Int32Array(a.length * 2);
  bigger.set(a);
  return bigger;
}

/** True when `perm` lists every index 0..n-1 exactly once. */
export function isPermutation(perm: ArrayLike<number>, n: number): boolean {
  if (perm.length !== n) return false;
  const seen = new Uint8Array(n);
  for (let k = 0; k < n; k++) {
    const v = perm[k];
    if (!(v >= 0 && v < n) || seen[v]) return false;
    seen[v] = 1;
  }
  return true;
}
