// Writes tests/utils/fileSeconds.json (each test file's seconds in the last full run, from vitest's JSON report
// tests/output/vitest.json): the plan of tests/utils/sequencer.ts reads it. Run after a full `npm test`.
import fs from 'node:fs'

const report = JSON.parse(fs.readFileSync('tests/output/vitest.json', 'utf8'))
const seconds = {}
for (const f of report.testResults) seconds[f.name.replace(/^.*?[\\/]tests[\\/]/, 'tests/')] = Math.max(1, Math.round((f.endTime - f.startTime) / 1000))
const sorted = Object.fromEntries(Object.entries(seconds).sort(([a], [b]) => a.localeCompare(b)))
fs.writeFileSync('tests/utils/fileSeconds.json', `${JSON.stringify(sorted, null, 1)}\n`)
console.log(`tests/utils/fileSeconds.json: ${Object.keys(sorted).length} files`)
