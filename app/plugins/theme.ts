import Aura from '@primeuix/themes/aura'
import { definePreset } from '@primeuix/themes'

/**
 * Spanmark's own palette on PrimeVue's structural base. Every shade 50-950 is set for both ramps,
 * otherwise hover and active states fall back to the base preset's colours.
 * Contrast (WCAG 2): white on primary 700 is 5.6:1, primary 700 on paper 5.0:1, muted text
 * (surface 600) on paper 5.0:1, text (surface 800) on paper 13.6:1.
 */
export const ochre = {
  50: '#FCF6E8',
  100: '#F8E9C6',
  200: '#F0D38E',
  300: '#E7BB57',
  400: '#DCA22F',
  500: '#C98A12',
  600: '#AD740D',
  700: '#8F5E0A',
  800: '#724A0B',
  900: '#5C3C0D',
  950: '#352107',
} as const

/** Warm paper neutrals: 50 is the app's paper, 200 its lines, 600 muted text, 800 text, 900 the viewport charcoal. */
export const paper = {
  0: '#FFFFFF',
  50: '#F7F3EC',
  100: '#EFE9DF',
  200: '#E4DDD2',
  300: '#D2C9BB',
  400: '#ADA397',
  500: '#857B70',
  600: '#6F675E',
  700: '#4F4841',
  800: '#2A2622',
  900: '#1E1B18',
  950: '#14120F',
} as const

/**
 * Spanmark's state ramps replace the base's red, green, blue and yellow, so severities (danger buttons,
 * error messages, toasts) speak Spanmark's colours. 500 is the brand shade; 600, used for message text on
 * the 50 tint, keeps at least 4.5:1 (brick 6.1, moss 5.7, slate 6.4, ochre 5.2).
 */
const brick = {
  50: '#FBF1EE',
  100: '#F6DDD7',
  200: '#ECBAAE',
  300: '#DE8F7E',
  400: '#CB6652',
  500: '#B4442E',
  600: '#9E3A26',
  700: '#83301F',
  800: '#67271A',
  900: '#4F1F15',
  950: '#2D110B',
}
const moss = {
  50: '#F1F6EE',
  100: '#DDEAD5',
  200: '#BDD6AE',
  300: '#95BD7F',
  400: '#6E9F57',
  500: '#4E7D3A',
  600: '#426A31',
  700: '#375728',
  800: '#2C4521',
  900: '#22361A',
  950: '#131E0E',
}
const slateBlue = {
  50: '#F0F4F8',
  100: '#DCE5EE',
  200: '#BACBDC',
  300: '#91AAC4',
  400: '#6B8AAA',
  500: '#4A6A8C',
  600: '#3F5B78',
  700: '#344B63',
  800: '#2A3C4F',
  900: '#20303F',
  950: '#121B24',
}
/** Cautions: the ochre ramp, with 500 onwards darkened so white text and text on the tint both read. */
const caution = { ...ochre, 500: ochre[700], 600: ochre[700], 700: ochre[800], 800: ochre[900], 900: '#472E0A', 950: ochre[950] }

export const SpanmarkPreset = definePreset(Aura, {
  primitive: { red: brick, green: moss, blue: slateBlue, sky: slateBlue, yellow: caution, orange: caution, amber: caution },
  semantic: {
    primary: ochre,
    focusRing: { width: '2px', style: 'solid', color: '{primary.700}', offset: '2px' },
    colorScheme: {
      light: {
        surface: paper,
        primary: {
          // Buttons and focus on light surfaces use 700: white text on 500 is only 2.9:1.
          color: '{primary.700}',
          contrastColor: '#FFFFFF',
          hoverColor: '{primary.800}',
          activeColor: '{primary.900}',
        },
        highlight: {
          background: '{primary.50}',
          focusBackground: '{primary.100}',
          color: '{primary.800}',
          focusColor: '{primary.900}',
        },
        formField: {
          borderColor: '{surface.300}',
          hoverBorderColor: '{surface.500}',
          focusBorderColor: '{primary.700}',
          invalidBorderColor: '#B4442E',
          color: '{surface.800}',
          placeholderColor: '{surface.600}',
          invalidPlaceholderColor: '#9E3A26',
          floatLabelColor: '{surface.600}',
          iconColor: '{surface.600}',
        },
        text: {
          color: '{surface.800}',
          hoverColor: '{surface.900}',
          mutedColor: '{surface.600}',
          hoverMutedColor: '{surface.700}',
        },
        content: {
          background: '{surface.0}',
          hoverBackground: '{surface.50}',
          borderColor: '{surface.200}',
        },
      },
    },
  },
  components: {
    button: {
      colorScheme: {
        light: {
          // The base's secondary text and outline buttons use surface 500 (4.2:1 on white); 700 reads at 9:1.
          outlined: { secondary: { borderColor: '{surface.300}', color: '{surface.700}' } },
          text: { secondary: { color: '{surface.700}' } },
        },
      },
    },
  },
})
