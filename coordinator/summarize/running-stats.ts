/**
 * Mean and spread of a stream of numbers in one pass and constant memory
 * (Welford's update), mergeable so per-point summaries can be pooled into
 * diagram cells without keeping the values.
 */
export class RunningStats {
  count = 0;
  mean = 0;
  /** Sum of squared deviations from the mean. */
  m2 = 0;

  add(value: number): void {
    this.count += 1;
    const delta = value - this.mean;
    this.mean += delta / this.count;
    this.m2 += delta * (value - this.mean);
  }

  /** Fold another summary into this one (Chan et al.'s pairwise combination). */
  merge(other: RunningStats): void {
    if (other.count === 0) return;
    if (this.count === 0) {
      this.count = other.count;
      this.mean = other.mean;
      this.m2 = other.m2;
      return;
    }
    const total = this.count + other.count;
    const delta = other.mean - this.mean;
    this.mean += (delta * other.count) / total;
    this.m2 += other.m2 + (delta * delta * this.count * other.count) / total;
    this.count = total;
  }

  /** Sample standard deviation (n - 1 in the denominator); null below two values. */
  sd(): number | null {
    return this.count < 2 ? null : Math.sqrt(this.m2 / (this.count - 1));
  }

  meanOrNull(): number | null {
    return this.count === 0 ? null : this.mean;
  }
}
