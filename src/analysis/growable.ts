/**
 * An append-only Float64 list that grows by doubling; used for per-100 ms series. Sized from the
 * expected length when the container tells it, so a long file's series is one allocation: the
 * doubling copies of a 3-hour series fragment the C heap by a few MB of resident memory.
 */
export class GrowableFloat64 {
  private data: Float64Array;
  private size = 0;

  constructor(expectedLength = 1024) {
    this.data = new Float64Array(Math.max(16, Math.ceil(expectedLength)));
  }

  push(value: number): void {
    if (this.size === this.data.length) {
      const bigger = new Float64Array(this.data.length * 2);
      bigger.set(this.data);
      this.data = bigger;
    }
    this.data[this.size++] = value;
  }

  get length(): number {
    return this.size;
  }

  /** A view of the values pushed so far (shares memory; do not keep across pushes). */
  view(): Float64Array {
    return this.data.subarray(0, this.size);
  }
}
