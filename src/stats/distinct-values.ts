/**
 * Numbers collected once each, in first-seen order, with the index of each: the distinct bounds
 * of a family's uniform components, whose normal cdf a result then needs once per bound rather
 * than once per component (likelihood-matrix.ts, posterior-sums.ts).
 */
export class DistinctValues {
  private readonly indexByValue = new Map<number, number>();
  private readonly list: number[] = [];

  /** The index of `value`, added if new. */
  indexOf(value: number): number {
    let index = this.indexByValue.get(value);
    if (index === undefined) {
      index = this.list.length;
      this.indexByValue.set(value, index);
      this.list.push(value);
    }
    return index;
  }

  get count(): number {
    return this.list.length;
  }

  values(): Float64Array {
    return Float64Array.from(this.list);
  }
}
