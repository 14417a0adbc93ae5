// The test order's plan (tests/utils/plan.ts, used by tests/utils/sequencer.ts), played through by hand: with two workers, the browser files
// run end to end (the lane never waits while other files are left), and every file is planned once.
import { describe, expect, it } from 'vitest'
import { planOrder } from '../../utils/plan'

type F = { name: string; browser: boolean; s: number }
const files: F[] = [
  ...[30, 20, 40].map((s, i) => ({ name: `b${i}`, browser: true, s })),
  ...[25, 5, 5, 10, 3, 3, 12, 8, 2, 30].map((s, i) => ({ name: `r${i}`, browser: false, s })),
]

/** Plays the order on `workers` workers, one browser file at a time, as vitest's pool takes them. */
function play(order: F[], workers: number) {
  const free = new Array<number>(workers).fill(0)
  let laneFree = 0
  const lane: { start: number; end: number }[] = []
  for (const f of order) {
    const w = free.indexOf(Math.min(...free))
    const start = f.browser ? Math.max(free[w]!, laneFree) : free[w]!
    free[w] = start + f.s
    if (f.browser) lane.push({ start, end: (laneFree = start + f.s) })
  }
  return { lane, end: Math.max(...free) }
}

describe('the planned test order', () => {
  it('keeps the browser lane busy from the start to its last file and plans every file once', () => {
    const order = planOrder(files, (f) => f.browser, (f) => f.s, 2)
    expect(order.map((f) => f.name).sort()).toEqual(files.map((f) => f.name).sort())
    const { lane, end } = play(order, 2)
    expect(lane[0]!.start).toBe(0)
    for (let i = 1; i < lane.length; i++) expect(lane[i]!.start).toBe(lane[i - 1]!.end)
    // All the work is 193 s: two workers cannot end before 96.5 s; the plan ends within a file of that.
    expect(end).toBeLessThanOrEqual(193 / 2 + 15)
  })

  it('ends no later than the browser files bunched at the front or spread evenly', () => {
    const plan = play(planOrder(files, (f) => f.browser, (f) => f.s, 2), 2).end
    const front = play([...files.filter((f) => f.browser), ...files.filter((f) => !f.browser)], 2).end
    expect(plan).toBeLessThanOrEqual(front)
  })
})
