import { readonly, ref, watch } from 'vue'
import { LENGTH_UNITS, type LengthUnit } from '@shared/format/units'

/**
 * The length unit this reader chose (m, mm or ft-in), one value for the whole app and kept in this browser.
 * The ref lives at module scope, so every component that calls useUnits() reads and sets the same one;
 * other tabs follow through the storage event. A first visit starts from the unit the scene viewer's
 * settings already hold, so the drawer and the viewport agree.
 */

const STORAGE_KEY = 'spanmark.units'
const VIEWER_SETTINGS_KEY = 'spanmark.viewer.settings'

export const UNIT_LABELS: Record<LengthUnit, string> = { m: 'm', mm: 'mm', 'ft-in': 'ft-in' }

export function isLengthUnit(value: unknown): value is LengthUnit {
  return typeof value === 'string' && (LENGTH_UNITS as readonly string[]).includes(value)
}

function storage(): Storage | null {
  try {
    return typeof localStorage === 'undefined' ? null : localStorage
  } catch {
    // Some privacy settings throw on merely reading localStorage.
    return null
  }
}

function load(): LengthUnit {
  const store = storage()
  if (!store) return 'm'
  try {
    const own = store.getItem(STORAGE_KEY)
    if (isLengthUnit(own)) return own
    const viewer = JSON.parse(store.getItem(VIEWER_SETTINGS_KEY) ?? '{}') as { unit?: unknown }
    return isLengthUnit(viewer.unit) ? viewer.unit : 'm'
  } catch {
    return 'm'
  }
}

const unit = ref<LengthUnit>(load())

watch(unit, (u) => {
  try {
    storage()?.setItem(STORAGE_KEY, u)
  } catch {
    // Private windows may refuse storage; the choice still holds for this visit.
  }
})

if (typeof window !== 'undefined') {
  window.addEventListener('storage', (event) => {
    if (event.key === STORAGE_KEY && isLengthUnit(event.newValue)) unit.value = event.newValue
  })
}

function setUnit(next: LengthUnit): void {
  if (isLengthUnit(next)) unit.value = next
}

/** The reader's length unit: `unit` to read (readonly ref), `setUnit` to change it everywhere. */
export function useUnits() {
  return { unit: readonly(unit), setUnit, units: LENGTH_UNITS, labels: UNIT_LABELS }
}
