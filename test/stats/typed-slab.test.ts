import { describe, it, expect } from 'vitest'
import { slabFloat64, slabFloat64Copy, slabInt32, slabInt32Copy } from '../../src/stats/typed-slab.ts'

describe('typed-slab', () => {
  it('gives zeroed, independent arrays, also across slab boundaries', () => {
    // enough arrays of mixed sizes and kinds to fill several 64 KiB slabs; each is filled with its own
    // id, so a view that overlapped another (e.g. one taken on a full slab) would be overwritten
    const arrays: (Float64Array | Int32Array)[] = []
    for (let k = 0; k < 3000; k++) {
      const length = 9 + ((k * 37) % 200)
      const array = k % 3 === 0 ? slabInt32(length) : slabFloat64(length)
      expect(array.length).toBe(length)
      for (let i = 0; i < length; i++) expect(array[i]).toBe(0)
      array.fill(k + 1)
      arrays.push(array)
    }
    arrays.forEach((array, k) => {
      for (let i = 0; i < array.length; i++) if (array[i] !== k + 1) throw new Error(`array ${k} was overwritten at ${i}`)
    })
  })

  it('copies like slice, and small or large arrays get their own buffers', () => {
    expect(Array.from(slabFloat64Copy(Float64Array.from([1, 2, 3, 4.5]), 1, 4))).toEqual([2, 3, 4.5])
    expect(Array.from(slabInt32Copy([5, 6, 7], 1))).toEqual([6, 7])
    expect(slabFloat64(4).buffer.byteLength).toBe(32)
    expect(slabFloat64(10_000).buffer.byteLength).toBe(80_000)
    expect(slabFloat64(0).length).toBe(0)
  })
})
