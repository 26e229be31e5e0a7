/**
 * Bounded selection of the k largest values (a binary min-heap of fixed capacity): O(n log k) time, O(k) memory,
 * no allocation per push. Used for `worst`, so millions of updates are never fully sorted.
 */

/** Keeps the `capacity` entries with the largest keys seen; ties keep the entry pushed first. */
export class TopK {
  private readonly keys: Float64Array;
  private readonly items: Int32Array;
  private readonly order: Float64Array;
  private size = 0;
  private pushed = 0;

  /** A selector keeping at most `capacity` entries. */
  constructor(readonly capacity: number) {
    const c = Math.max(0, Math.floor(capacity));
    this.keys = new Float64Array(c);
    this.items = new Int32Array(c);
    this.order = new Float64Array(c);
  }

  /** Offer `item` with `key`; NaN keys are ignored. */
  push(key: number, item: number): void {
    if (Number.isNaN(key) || this.keys.length === 0) return;
    const seq = this.pushed++;
    if (this.size < this.keys.length) {
      let i = this.size++;
      // sift up
      while (i > 0) {
        const parent = (i - 1) >> 1;
        if (!this.less(key, seq, this.keys[parent], this.order[parent])) break;
        this.keys[i] = this.keys[parent]; this.items[i] = this.items[parent]; this.order[i] = this.order[parent];
        i = parent;
      }
      this.keys[i] = key; this.items[i] = item; this.order[i] = seq;
      return;
    }
    // Full: replace the root (the smallest kept) only when the new entry ranks above it.
    if (!this.less(this.keys[0], this.order[0], key, seq)) return;
    let i = 0;
    const n = this.size;
    for (;;) {
      const l = 2 * i + 1;
      if (l >= n) break;
      const r = l + 1;
      let m = l;
      if (r < n && this.less(this.keys[r], this.order[r], this.keys[l], this.order[l])) m = r;
      if (!this.less(this.keys[m], this.order[m], key, seq)) break;
      this.keys[i] = this.keys[m]; this.items[i] = this.items[m]; this.order[i] = this.order[m];
      i = m;
    }
    this.keys[i] = key; this.items[i] = item; this.order[i] = seq;
  }

  /** The kept items, largest key first (ties: earlier push first). */
  result(): { keys: number[]; items: number[] } {
    const idx = Array.from({ length: this.size }, (_, i) => i);
    idx.sort((a, b) => (this.keys[b] - this.keys[a]) || (this.order[a] - this.order[b]));
    return { keys: idx.map((i) => this.keys[i]), items: idx.map((i) => this.items[i]) };
  }

  /** Ranking: entry a ranks below entry b when its key is smaller, or equal and pushed later. */
  private less(keyA: number, seqA: number, keyB: number, seqB: number): boolean {
    return keyA < keyB || (keyA === keyB && seqA > seqB);
  }
}
