import type { MarkerKindUi, PlacingContext } from './types'

/** The shared clicks panel's props (ViewerMarkerClicks.vue): a kind placed by clicks, its hint and preview. */
export function clicksPanelProps(tools: PlacingContext['tools'], ui: MarkerKindUi) {
  return {
    title: ui.title,
    icon: ui.icon,
    toolKey: ui.tool.key,
    hint: tools.hint,
    preview: tools.preview,
    count: tools.count,
    needed: tools.needed,
    saving: tools.saving,
    error: tools.error,
    onCancel: tools.cancel,
  }
}
