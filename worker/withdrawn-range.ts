/**
 * The range of request ids a pool thread must not start, shared between the
 * pool (which writes it when it takes jobs back) and the thread (which reads
 * it before starting each job it was handed). Two BigInt64 slots over a
 * SharedArrayBuffer: from and to, both 0 while nothing was taken back. Ids
 * only grow, so jobs handed over later are never in an earlier range.
 */
const FROM = 0;
const TO = 1;

export function newWithdrawnRange(): SharedArrayBuffer {
  return new SharedArrayBuffer(2 * BigInt64Array.BYTES_PER_ELEMENT);
}

/** Pool side: requests `from` to `to` are taken back. */
export function withdrawRange(view: BigInt64Array, from: number, to: number): void {
  // `to` first: a thread that sees the new `from` also sees its `to`.
  Atomics.store(view, TO, BigInt(to));
  Atomics.store(view, FROM, BigInt(from));
}

/** Thread side: whether request `id` was taken back. */
export function isWithdrawn(view: BigInt64Array, id: number): boolean {
  const from = Atomics.load(view, FROM);
  if (from === 0n) return false;
  const at = BigInt(id);
  return at >= from && at <= Atomics.load(view, TO);
}
