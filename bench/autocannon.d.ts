// The parts of autocannon 8 that bench/server.ts uses (the package ships no type declarations).
declare module 'autocannon' {
  namespace autocannon {
    interface Options {
      url: string
      connections?: number
      duration?: number
      /** requests per second across all connections */
      overallRate?: number
      method?: string
      headers?: Record<string, string>
    }
    interface Histogram {
      average: number
      mean: number
      stddev: number
      min: number
      max: number
      p50: number
      p90: number
      p99: number
      p999: number
    }
    interface Result {
      requests: Histogram & { total: number; sent: number }
      latency: Histogram
      throughput: Histogram
      errors: number
      timeouts: number
      non2xx: number
      duration: number
    }
  }
  function autocannon(options: autocannon.Options): Promise<autocannon.Result>
  export default autocannon
}
