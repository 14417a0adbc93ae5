/**
 * The plan of tests/utils/sequencer.ts, kept apart from vitest so it can be played through anywhere: the
 * order in which `workers` workers should take the files so that files in the browser lane (one at a time)
 * run end to end.
 */
export function planOrder<T>(files: readonly T[], browser: (f: T) => boolean, seconds: (f: T) => number, workers: number): T[] {
  const byLength = (a: T, b: T) => seconds(b) - seconds(a)
  const lane = files.filter(browser).sort(byLength)
  const rest = files.filter((f) => !browser(f)).sort(byLength)
  const free = new Array<number>(Math.max(1, workers)).fill(0)
  let laneFree = 0
  const out: T[] = []
  while (lane.length || rest.length) {
    const w = free.indexOf(Math.min(...free))
    const t = free[w]!
    let next: T
    let start = t
    if (lane.length && (laneFree <= t || rest.length === 0)) {
      next = lane.shift()!
      start = Math.max(t, laneFree)
      laneFree = start + seconds(next)
    } else {
      // Another worker comes free by the time the lane does (the one in the lane, usually): this one takes the
      // longest file left. Else the longest that ends before the lane frees, else the shortest (the least the
      // lane waits).
      const covered = free.some((f, i) => i !== w && f <= laneFree)
      const room = laneFree - t
      const fits = !lane.length || covered ? 0 : rest.findIndex((f) => seconds(f) <= room)
      next = rest.splice(fits >= 0 ? fits : rest.length - 1, 1)[0]!
    }
    free[w] = start + seconds(next)
    out.push(next)
  }
  return out
}
