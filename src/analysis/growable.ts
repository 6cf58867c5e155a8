/** An append-only Float64 list that grows by doubling; used for per-100 ms series. */
export class GrowableFloat64 {
  private data = new Float64Array(1024);
  private size = 0;

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
