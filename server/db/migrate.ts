import fs from 'node:fs/promises'
import path from 'node:path'
import { pathToFileURL } from 'node:url'
import { Migrator, type Kysely, type Migration, type MigrationProvider } from 'kysely'

import { buildDir, compiled, projectRoot } from '../paths'

/** The migrations: their sources, or their compiled counterparts when the server runs compiled (build/migrations). */
export const migrationsDir = compiled ? path.join(buildDir, 'migrations') : path.join(projectRoot, 'migrations')

/**
 * Kysely's FileMigrationProvider imports through its own code, which vitest does not transform, so .ts
 * migrations fail there; importing them from here works under tsx and vitest alike.
 */
class FolderMigrationProvider implements MigrationProvider {
  constructor(private readonly dir: string) {}
  async getMigrations(): Promise<Record<string, Migration>> {
    const files = (await fs.readdir(this.dir)).filter((f) => /^\d{14}_[\w-]+\.(ts|js)$/.test(f)).sort()
    const out: Record<string, Migration> = {}
    for (const f of files) out[f.replace(/\.(ts|js)$/, '')] = (await import(pathToFileURL(path.join(this.dir, f)).href)) as Migration
    return out
  }
}

export async function migrateToLatest(db: Kysely<any>, dir = migrationsDir): Promise<string[]> {
  // Branches land in any order: a migration merged after a later-named one already ran is applied, not refused.
  const migrator = new Migrator({ db, provider: new FolderMigrationProvider(dir), allowUnorderedMigrations: true })
  const { error, results } = await migrator.migrateToLatest()
  const failed = results?.find((r) => r.status === 'Error')
  if (error || failed) {
    const what = failed ? `migration ${failed.migrationName} failed` : 'migrations failed'
    throw new Error(`${what}: ${error instanceof Error ? error.message : String(error)}`)
  }
  return (results ?? []).map((r) => r.migrationName)
}
