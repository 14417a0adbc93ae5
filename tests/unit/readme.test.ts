// The station log example in README.md is read by the real reader, so the documentation cannot drift.
import fs from 'node:fs'
import { expect, it } from 'vitest'
import { readAll } from '../../server/points/readers'

it("reads the README's station log example", async () => {
  const readme = fs.readFileSync('README.md', 'utf8')
  const block = /```\n(# spanmark-station-log 1\n[\s\S]*?)```/.exec(readme)
  expect(block, 'README has a station log example').not.toBeNull()
  const cloud = await readAll(Buffer.from(block![1]!), 'station-log')
  expect(cloud.count).toBe(2)
  expect(cloud.uncertainties!.length).toBe(2)
  // The first reading: four valid samples of five, mean 4.013025 m, plus the 2 mm range zero offset.
  const r = Math.hypot(cloud.positions[0]!, cloud.positions[1]!, cloud.positions[2]! - 0.035)
  expect(r).toBeGreaterThan(4.0)
  expect(r).toBeLessThan(4.05)
})
