// A Spanmark server as an operating-system process of its own (`node --import tsx server/index.ts`), so a
// test can really kill it with SIGKILL. It runs with the test settings on the database it is given.
import { spawn, type ChildProcess } from 'node:child_process'
import fs from 'node:fs'
import os from 'node:os'
import path from 'node:path'

export interface ServerProcess {
  url: string
  pid: number
  child: ChildProcess
  /** SIGKILL: no clean-up of any kind (its sockets drop, its process row stays until it ages out). */
  kill(): Promise<void>
  /** SIGTERM and wait (a clean stop), then its data folder goes. */
  stop(): Promise<void>
}

export async function spawnServer(databaseUrl: string, env: NodeJS.ProcessEnv = {}): Promise<ServerProcess> {
  const dataDir = fs.mkdtempSync(path.join(os.tmpdir(), 'spanmark-proc-'))
  const child = spawn(process.execPath, ['--import', 'tsx', 'server/index.ts'], {
    env: { ...process.env, SPANMARK_ENV: 'test', DATABASE_URL: databaseUrl, PORT: '0', SMTP_PORT: '0', MAIL_FAKE: '1', S3_FAKE: '1', S3_FAKE_PORT: '0', DATA_DIR: dataDir, WORKER: 'none', LOG_LEVEL: 'warn', COMPUTE_THREADS: '1', ...env },
    stdio: ['ignore', 'pipe', 'inherit'],
  })
  const exited = new Promise<void>((resolve) => child.once('exit', () => resolve()))
  const url = await new Promise<string>((resolve, reject) => {
    let out = ''
    child.stdout!.on('data', (chunk: Buffer) => {
      out += chunk.toString()
      const m = /running at (http:\/\/\S+)/.exec(out)
      if (m) resolve(m[1]!)
    })
    child.once('exit', (code) => reject(new Error(`the server process exited (${code}) before it was ready: ${out}`)))
  })
  const done = () => fs.rmSync(dataDir, { recursive: true, force: true })
  return {
    url,
    pid: child.pid!,
    child,
    async kill() {
      if (child.exitCode === null && child.signalCode === null) child.kill('SIGKILL')
      await exited
      done()
    },
    async stop() {
      if (child.exitCode === null && child.signalCode === null) child.kill('SIGTERM')
      await exited
      done()
    },
  }
}
