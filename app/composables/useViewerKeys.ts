import { onBeforeUnmount, onMounted } from 'vue'

/** One-letter keys for the viewer's tools, ignored while typing in a field or with a modifier held. */
export function useViewerKeys(bindings: Record<string, () => void>) {
  function onKey(event: KeyboardEvent): void {
    if (event.ctrlKey || event.metaKey || event.altKey || event.repeat) return
    const el = event.target as HTMLElement | null
    if (el && (el.tagName === 'INPUT' || el.tagName === 'TEXTAREA' || el.tagName === 'SELECT' || el.isContentEditable)) return
    const action = bindings[event.key.toUpperCase()]
    if (!action) return
    event.preventDefault()
    action()
  }
  onMounted(() => window.addEventListener('keydown', onKey))
  onBeforeUnmount(() => window.removeEventListener('keydown', onKey))
}
