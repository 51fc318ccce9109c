/** Append-only typed arrays for per-feature data (never per cell). */
export class IntList {
  data: Int32Array;
  length = 0;
  constructor(capacity = 1024) {
    this.data = new Int32Array(Math.max(16, capacity));
  }
  push(x: number): number {
    if (this.length === this.data.length) {
      const d = new Int32Array(this.data.length * 2);
      d.set(this.data);
      this.data = d;
    }
    this.data[this.length] = x;
    return this.length++;
  }
  toArray(): Int32Array {
    return this.data.slice(0, this.length);
  }
  /** The contents, without a copy when the list is exactly full; the list is not to be used afterwards. */
  take(): Int32Array {
    return this.length === this.data.length ? this.data : this.data.slice(0, this.length);
  }
}
