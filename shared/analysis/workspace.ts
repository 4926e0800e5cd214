// Large typed arrays are costly the first time they are written (the operating system hands out
// fresh zeroed pages: ~20 ms per 8 MB on the benchmark machine). The synchronous estimators
// therefore borrow their working buffers from here instead of allocating them per call. A
// borrowed buffer never escapes the call that borrowed it, so single-threaded reuse is safe.

const slots: (Float64Array | null)[] = [null, null];

/**
 * A Float64Array view of `length` elements from workspace slot 0 or 1, valid until the next
 * borrow of the same slot. Its contents are unspecified. (Driftbench implementation detail.)
 */
export function borrowWorkspace(slot: 0 | 1, length: number): Float64Array {
  const buf = slots[slot];
  if (buf && buf.length >= length) return buf.subarray(0, length);
  const fresh = new Float64Array(length);
  slots[slot] = fresh;
  return fresh;
}

/** Drops the cached working buffers (after a very large analysis, to give the memory back). */
export function releaseWorkspace(): void {
  slots[0] = null;
  slots[1] = null;
}
