/**
 * @module ability/normal
 * Standard normal density and cumulative distribution function, used by EAP priors and by
 * SE-aware coverage (Φ((θ̂ − θreq)/SE)).
 */

const SQRT_2PI = Math.sqrt(2 * Math.PI)

/**
 * Standard normal probability density φ(x) = exp(−x²/2)/√(2π).
 *
 * @see https://en.wikipedia.org/wiki/Normal_distribution
 * @example normalPdf(0) // => 0.3989422804014327
 */
export function normalPdf(x: number): number {
  return Math.exp(-0.5 * x * x) / SQRT_2PI
}

/**
 * Standard normal cumulative distribution function Φ(x), by Hart's (1968) rational approximation
 * in the double-precision form given by G. West, "Better approximations to cumulative normal
 * functions" (Wilmott Magazine, 2005; https://www.wilmott.com/ and widely reproduced). Absolute
 * error below about 1e-14 over the real line; the lower tail is computed directly (not as 1 − upper),
 * so tiny probabilities keep their relative precision. O(1).
 *
 * @example normalCdf(1.959963984540054) // => 0.975 (to 1e-12)
 */
export function normalCdf(x: number): number {
  if (Number.isNaN(x)) return Number.NaN
  const absX = Math.abs(x)
  let tail: number
  if (absX > 37) {
    tail = 0
  } else {
    const expPart = Math.exp(-0.5 * absX * absX)
    if (absX < 7.07106781186547) {
      let numerator = 3.52624965998911e-2 * absX + 0.700383064443688
      numerator = numerator * absX + 6.37396220353165
      numerator = numerator * absX + 33.912866078383
      numerator = numerator * absX + 112.079291497871
      numerator = numerator * absX + 221.213596169931
      numerator = numerator * absX + 220.206867912376
      let denominator = 8.83883476483184e-2 * absX + 1.75566716318264
      denominator = denominator * absX + 16.064177579207
      denominator = denominator * absX + 86.7807322029461
      denominator = denominator * absX + 296.564248779674
      denominator = denominator * absX + 637.333633378831
      denominator = denominator * absX + 793.826512519948
      denominator = denominator * absX + 440.413735824752
      tail = (expPart * numerator) / denominator
    } else {
      // continued fraction for the far tail
      let fraction = absX + 0.65
      fraction = absX + 4 / fraction
      fraction = absX + 3 / fraction
      fraction = absX + 2 / fraction
      fraction = absX + 1 / fraction
      tail = expPart / fraction / SQRT_2PI
    }
  }
  return x > 0 ? 1 - tail : tail
}

/**
 * Inverse of the standard normal CDF (quantile function), by bisection refined with Newton steps on
 * {@link normalCdf}. Used only for interval multipliers (z for a confidence level), so speed is
 * secondary. O(log(1/ε)).
 *
 * @throws RangeError when p is not strictly between 0 and 1
 * @example normalQuantile(0.975) // => 1.959963984540054 (to 1e-9)
 */
export function normalQuantile(p: number): number {
  if (!(p > 0 && p < 1)) throw new RangeError(`normalQuantile requires 0 < p < 1 (got ${p})`)
  let low = -40
  let high = 40
  for (let i = 0; i < 200 && high - low > 1e-12; i++) {
    const mid = 0.5 * (low + high)
    if (normalCdf(mid) < p) low = mid
    else high = mid
  }
  let x = 0.5 * (low + high)
  for (let i = 0; i < 3; i++) {
    const density = normalPdf(x)
    if (density < 1e-300) break
    x -= (normalCdf(x) - p) / density
  }
  return x
}
