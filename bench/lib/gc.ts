import v8 from 'node:v8'
import vm from 'node:vm'

/** A full garbage collection now (exposing `gc` when node was started without --expose-gc), for heap figures. */
export function gcNow(): void {
  let gc = (globalThis as { gc?: () => void }).gc
  if (!gc) {
    v8.setFlagsFromString('--expose-gc')
    gc = vm.runInNewContext('gc') as () => void
  }
  gc()
}
