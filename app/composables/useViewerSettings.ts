import { reactive, watch } from 'vue'
import { LENGTH_UNITS, type LengthUnit } from '@shared/format/units'
import { DEFAULT_DRAW_LIMIT, MAX_DRAW_LIMIT, MIN_DRAW_LIMIT } from '@/viewer/PointViewer'
import type { ColorMode } from '@/viewer/types'

export const COLOR_MODES: readonly { value: ColorMode; label: string }[] = [
  { value: 'rgb', label: 'Scan colour' },
  { value: 'intensity', label: 'Intensity' },
  { value: 'height', label: 'Height' },
  { value: 'placement', label: 'Placement colour' },
]

export interface ViewerSettings {
  drawLimit: number
  pointSize: number
  colorMode: ColorMode
  unit: LengthUnit
}

const STORAGE_KEY = 'spanmark.viewer.settings'

function load(): ViewerSettings {
  const defaults: ViewerSettings = { drawLimit: DEFAULT_DRAW_LIMIT, pointSize: 2, colorMode: 'rgb', unit: 'm' }
  try {
    const raw = JSON.parse(localStorage.getItem(STORAGE_KEY) ?? '{}') as Partial<ViewerSettings> & { pointBudget?: number }
    // Kept from before the setting took its own name.
    if (raw.drawLimit === undefined && raw.pointBudget !== undefined) raw.drawLimit = raw.pointBudget
    return {
      drawLimit: Number.isFinite(raw.drawLimit) ? Math.min(MAX_DRAW_LIMIT, Math.max(MIN_DRAW_LIMIT, raw.drawLimit!)) : defaults.drawLimit,
      pointSize: Number.isFinite(raw.pointSize) ? Math.min(8, Math.max(1, raw.pointSize!)) : defaults.pointSize,
      colorMode: COLOR_MODES.some((m) => m.value === raw.colorMode) ? raw.colorMode! : defaults.colorMode,
      unit: (LENGTH_UNITS as readonly string[]).includes(raw.unit ?? '') ? raw.unit! : defaults.unit,
    }
  } catch {
    return defaults
  }
}

/** The reader's own display settings for scenes (this browser only): drawing limit and size, colouring, unit. */
export function useViewerSettings() {
  const settings = reactive(load())
  watch(settings, (s) => {
    try {
      localStorage.setItem(STORAGE_KEY, JSON.stringify(s))
    } catch {
      // Private windows may refuse storage; the settings still hold for this visit.
    }
  })
  return settings
}
