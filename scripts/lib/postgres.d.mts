// Types of the parts of postgres.mjs that tests import (a dedicated cluster for a restart test).
export function findPgBin(): string | null
export function freePort(): Promise<number>
export function startCluster(options: { bin: string; dataDir: string; port: number; database: string; devSettings?: boolean }): Promise<{ url: string; adminUrl: string; port: number; started: boolean }>
export function stopCluster(options: { bin: string; dataDir: string }): void
