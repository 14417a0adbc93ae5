import { createApp } from 'vue'
import '@fontsource/work-sans/400.css'
import '@fontsource/work-sans/500.css'
import '@fontsource/work-sans/600.css'
import './styles/main.css'
import App from './App.vue'
import { installPlugins } from './plugins'
import { router } from './router'

const app = createApp(App)
installPlugins(app)
// Mount after the first navigation so the guard's session check never flashes the wrong layout.
void router.isReady().finally(() => app.mount('#app'))
