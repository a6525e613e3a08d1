/**
 * @module stats/typed-slab
 * Small typed arrays carved from shared slabs, for the per-skill work arrays of the fit.
 *
 * V8 keeps a typed array of more than 64 bytes in its own off-heap buffer: each `new
 * Float64Array(60)` costs a malloc, a zero fill and a finaliser that the garbage collector must run
 * (0.4 to 3.5 µs each with the collector's share, measured with node 20 on 60 to 480 values, against
 * about 60 ns for a view on an existing buffer).
 * The fit of one skill makes a few dozen such arrays (designs, fitted values, smoothing states), so
 * they are taken here as views on a 64 KiB slab instead, consecutive views side by side. A slab is
 * never reused: a new one is started when the current one is full, and an old one is freed by the
 * garbage collector once no view on it is reachable. Views are therefore independent arrays, zeroed
 * like fresh ones; the only difference is their `.buffer`, which is the whole slab (no caller here
 * reads it). A view kept alive keeps its slab (at most 64 KiB) alive, so results that outlive a
 * run should be copied (the curves keep plain arrays).
 *
 * Reference: V8's typed-array heap limit, flag `--typed-array-max-size-in-heap` (default 64 bytes,
 * from memory of V8's flag definitions). Cost: O(length) for a new slab, O(1) otherwise.
 */

const SLAB_BYTES = 64 * 1024
/** larger arrays get their own buffer (the slab would fill too fast to matter) */
const LARGEST_SLAB_BYTES = 4096

let slab = new ArrayBuffer(SLAB_BYTES)
let used = 0

function carve(bytes: number): number {
  // 8-byte steps keep every view aligned for Float64Array
  const rounded = (bytes + 7) & ~7
  if (used + rounded > SLAB_BYTES) {
    slab = new ArrayBuffer(SLAB_BYTES)
    used = 0
  }
  const offset = used
  used += rounded
  return offset
}

/**
 * A zeroed Float64Array of `length` values.
 *
 * @example
 * ```ts
 * slabFloat64(60).length // => 60 (all zero)
 * ```
 */
export function slabFloat64(length: number): Float64Array {
  const bytes = length * 8
  if (bytes <= 64 || bytes > LARGEST_SLAB_BYTES) return new Float64Array(length)
  const offset = carve(bytes) // first: it may start a new slab
  return new Float64Array(slab, offset, length)
}

/**
 * A zeroed Int32Array of `length` values.
 *
 * @example
 * ```ts
 * slabInt32(60).length // => 60 (all zero)
 * ```
 */
export function slabInt32(length: number): Int32Array {
  const bytes = length * 4
  if (bytes <= 64 || bytes > LARGEST_SLAB_BYTES) return new Int32Array(length)
  const offset = carve(bytes) // first: it may start a new slab
  return new Int32Array(slab, offset, length)
}

/**
 * A slab copy of values[from..to) (like `typed.slice(from, to)`).
 *
 * @example
 * ```ts
 * slabFloat64Copy(Float64Array.from([1, 2, 3]), 1, 3) // => Float64Array [2, 3]
 * ```
 */
export function slabFloat64Copy(values: ArrayLike<number>, from = 0, to = values.length): Float64Array {
  const copy = slabFloat64(Math.max(0, to - from))
  for (let i = from; i < to; i++) copy[i - from] = values[i]!
  return copy
}

/**
 * A slab copy of values[from..to) as an Int32Array.
 *
 * @example
 * ```ts
 * slabInt32Copy(Int32Array.from([1, 2, 3]), 1) // => Int32Array [2, 3]
 * ```
 */
export function slabInt32Copy(values: ArrayLike<number>, from = 0, to = values.length): Int32Array {
  const copy = slabInt32(Math.max(0, to - from))
  for (let i = from; i < to; i++) copy[i - from] = values[i]!
  return copy
}
