// `npm run bench` (through scripts/bench.mjs, which provides a throwaway PostgreSQL): every figure of
// DEVELOPERS.md "Targets" that exists so far. `--sizes 1e6` for a quick run; default 1 M and 10 M points.
import { clusterOptions, formatClusterBench, runClusterBench } from './cluster'
import { formatE57Bench, runE57Bench } from './e57'
import { formatEdgeBench, runEdgeBench } from './edges'
import { formatExportBench, runExportBench } from './export'
import { formatIngestBench, runIngestBench } from './ingest'
import { formatLiveBench, runLiveBench } from './live'
import { formatLiveLimitsBench, runLiveLimitsBench } from './liveLimits'
import { formatMarkerBench, runMarkerBench } from './markers'
import { runOctreeBench } from './octree'
import { formatPoolBench, runPoolBench } from './pool'
import { formatParseBench, runParseBench } from './parse'
import { formatRegistrationBench, formatRegistrationServiceBench, runRegistrationBench, runRegistrationServiceBench } from './registration'
import { formatTrimBench, runTrimBench } from './trims'
import { formatUploadBench, runUploadBench } from './upload'
import { formatViewerBench, runViewerBench } from './viewer'

function sizes(argv: string[]): number[] {
  const at = argv.indexOf('--sizes')
  const text = at >= 0 ? argv[at + 1] : undefined
  return (text ?? '1e6,1e7').split(',').map(Number)
}

const s = sizes(process.argv.slice(2))
/**
 * `--only parse,markers` runs some sections (names: parse, e57, octree, ingest, upload, export, viewer, markers, pool, live, liveLimits, cluster,
 * registration, edges, trims). The cluster bench takes `--cluster-seconds 60`, `--cluster-clients 200`, `--cluster-scenes 10`,
 * `--cluster-edit-ms 2000`, `--cluster-rest-seconds 20`, `--cluster-rest-loops 8`.
 */
const onlyAt = process.argv.indexOf('--only')
const only = onlyAt >= 0 ? new Set(process.argv[onlyAt + 1]!.split(',')) : null
const wanted = (name: string) => !only || only.has(name)
const log = (l: string) => process.stderr.write(`${l}\n`)
const out: string[] = []
const section = (title: string, body: string) => {
  out.push(`\n## ${title}\n\n${body}\n`)
  process.stdout.write(`\n## ${title}\n\n${body}\n`)
}

if (wanted('parse')) section('Parse (targets: binary PLY and LAS >= 15 M points/s, >= 10x three PLYLoader)', formatParseBench(runParseBench(s, log)))
if (wanted('e57')) section('E57 read through ranged reads of the file (memory flat as the file grows)', formatE57Bench(runE57Bench([1e6, 5e6], log)))
if (wanted('octree')) section(
  'Octree, tiles, statistics, nearest point (in memory; target: anchor check p99 < 5 ms warm, < 50 ms cold)',
  (await runOctreeBench(s))
    .map((r) => `${r.points / 1e6} M: build ${r.buildMs.toFixed(0)} ms, encode ${r.encodeMs.toFixed(0)} ms, spacing ${r.spacingMs.toFixed(0)} ms, uncertainty ${r.uncertaintyMs.toFixed(0)} ms; nearest cold p50/p99 ${r.coldP50Ms.toFixed(2)}/${r.coldP99Ms.toFixed(2)} ms, warm ${r.warmP50Ms.toFixed(3)}/${r.warmP99Ms.toFixed(3)} ms; peak RSS ${r.peakRssBuildMB.toFixed(0)} MB`)
    .join('\n'),
)
if (wanted('ingest')) section('Ingest through the server (targets at 10 M: binary PLY or LAS < 6 s and < 1 GB, ASCII XYZ < 15 s)', formatIngestBench(await runIngestBench(s, log)))
if (wanted('export')) section('Export of a scene (LAS 1.4, E57, PLY) through the worker into object storage; worker memory flat as the count grows', formatExportBench(await runExportBench(s, log)))
if (wanted('upload')) section('Resumable upload on loopback (target: >= 200 MB/s for a 2 GB file in parts)', formatUploadBench(await runUploadBench(2e9, 4, log)))
if (wanted('viewer')) section('Viewer (target: first frame < 1 s for a 10 M-point scan; points drawn within the budget)', formatViewerBench(await runViewerBench(Math.max(...s), log)))
if (wanted('markers')) section('Marker checks (targets: anchor check p99 < 5 ms warm, < 50 ms cold on 10 M points)', formatMarkerBench(await runMarkerBench(Math.max(...s), log)))
if (wanted('pool')) section('Heavy checks off the event loop (target: event-loop delay p99 < 50 ms during a clearance of a 1 M-point object)', formatPoolBench(await runPoolBench(log)))
if (wanted('live')) section('Live documents (targets: an edit seen by 50 clients p99 < 50 ms; state at any of 10 k revisions < 100 ms)', formatLiveBench(await runLiveBench(log)))
if (wanted('cluster')) {
  const o = clusterOptions(process.argv.slice(2))
  section(
    `Two server processes (targets: ${o.clients} live clients, an edit seen on the other process p99 < 100 ms on loopback, every document converging with the database; REST throughput per process)`,
    formatClusterBench(await runClusterBench(o, log)),
  )
}
if (wanted('liveLimits')) section('Live connection caps (the server heap and RSS before, at peak and after each misbehaving client)', formatLiveLimitsBench(await runLiveLimitsBench(log)))
if (wanted('registration')) {
  section(
    'Registration (closed form on 1 000 pairs; ICP of two 1 M-point scans in a few seconds on 2 cores)',
    `${formatRegistrationBench(await runRegistrationBench(log))}\n${formatRegistrationServiceBench(await runRegistrationServiceBench(log))}`,
  )
}

if (wanted('edges')) section('Edges under noise: coverage of U (k = 2) over 200 fixed-seed trials per level (goal >= 91 %)', formatEdgeBench(runEdgeBench(undefined, undefined, log)))
if (wanted('trims')) section('Trims and stray points (target: a 1 M-point capture in a few seconds each, one core)', formatTrimBench(runTrimBench([1e6], log)))

// Every section has printed: leave now rather than wait on handles a bench left open (the live bench's run
// did not end by itself once, after its figures were out; see the closing note of the live issue).
process.exit(0)
