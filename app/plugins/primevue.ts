import type { App } from 'vue'
import PrimeVue from 'primevue/config'
import ConfirmationService from 'primevue/confirmationservice'
import ToastService from 'primevue/toastservice'
import { SpanmarkPreset } from './theme'

export function installPrimeVue(app: App): void {
  app.use(PrimeVue, {
    theme: {
      preset: SpanmarkPreset,
      // Only the light scheme is designed so far; never follow the system's dark setting.
      options: { darkModeSelector: 'none', cssLayer: false },
    },
  })
  app.use(ToastService)
  app.use(ConfirmationService)
}
