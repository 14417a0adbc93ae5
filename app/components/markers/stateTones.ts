/**
 * Text shades of the state tones (the brand palette's roles) on the drawer's light surfaces. The brand shades are kept
 * where they already reach 4.5:1 (WCAG 2.1, 1.4.3) on white, paper and the selected row's ochre tint;
 * moss is taken one step darker (500 #4E7D3A is 4.4:1 on paper), and slate and brick use their text shades.
 */
import type { StateTone } from '@shared/collab/states'

export const TONE_TEXT: Record<StateTone, string> = {
  good: '#426A31', // moss 600
  bad: '#9E3A26', // brick 600, the app's error text
  unsure: '#3F5B78', // slate blue 600
  neutral: '#6F675E', // muted text
}

/** The light surfaces a state word sits on: panel, paper (row hover), ochre 50 (selected row). */
export const LIGHT_SURFACES = ['#FFFFFF', '#F7F3EC', '#FCF6E8'] as const
