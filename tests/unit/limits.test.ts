// The cost limits' messages and the README's list of them: the numbers a person reads are the ones enforced.
import fs from 'node:fs'
import { describe, expect, it } from 'vitest'
import { UPLOAD_LIMITS } from '@shared/schemas'
import { PRODUCTION_LIMITS, PRODUCTION_RATE_LIMITS } from '../../server/config'
import { pointLimitMessage } from '../../server/points/ingest'

describe('pointLimitMessage', () => {
  it('states the header count, the limit and how to split, per kind of file', () => {
    expect(pointLimitMessage(1000, 2500, 'ply')).toBe(
      'The scan has more points than this project allows: its header declares 2,500 points, and the limit per scan is 1,000. To load it, split the file into parts of at most that many points (for example by area, with the tool that wrote it) and upload each part as its own scan, or ask the project\'s owner to raise "Points per scan" in the project\'s settings.',
    )
    expect(pointLimitMessage(500_000_000, null, 'xyz')).toContain('reading stopped after 500,000,000 points, with more to come')
    expect(pointLimitMessage(1000, null, 'xyz')).toContain('parts of at most that many lines')
    expect(pointLimitMessage(1000, null, 'station-log')).toContain('split the station log into runs of readings')
  })
})

describe('README "Security and limits"', () => {
  const readme = fs.readFileSync('README.md', 'utf8')
  const section = readme.slice(readme.indexOf('## Security and limits'), readme.indexOf('## Safety'))
  const words = (n: number) => n.toLocaleString('en-GB').replace(/,/g, ' ')

  it('lists every limit with the number the server enforces', () => {
    expect(section).toContain(`reads at most ${words(PRODUCTION_LIMITS.checkPoints)} stored points`)
    expect(section).toContain(`at most ${PRODUCTION_LIMITS.checksQueuedPerProject} background checks`)
    expect(section).toContain(`**Markers per scene**: ${words(PRODUCTION_LIMITS.markersPerScene)}`)
    expect(section).toContain(`${PRODUCTION_RATE_LIMITS.upload.limit} uploads an hour per person`)
    expect(PRODUCTION_RATE_LIMITS.upload.windowMs).toBe(60 * 60_000)
    expect(section).toContain(`${PRODUCTION_LIMITS.uploadsInFlightPerProject} uploads of one project being received`)
    expect(section).toContain(`${UPLOAD_LIMITS.dailyBytes.default / 1024 ** 3} GiB a project in any 24 hours`)
    expect(section).toContain(`${words(UPLOAD_LIMITS.scanPoints.default)} by default`)
    expect(section).toContain(`crashed or stalled ${PRODUCTION_LIMITS.ingestAttempts} times`)
    expect(section).toContain(`for all scans together, at most ${PRODUCTION_LIMITS.nearestCacheBytes / 1024 ** 3} GiB`)
  })
})
