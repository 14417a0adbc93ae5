import { runIngestBench } from './bench/ingest'
const rows = await runIngestBench([Number(process.argv[2] ?? 1e7)], console.error)
console.log(rows)
