import { fileURLToPath, URL } from 'node:url'
import vue from '@vitejs/plugin-vue'
import { defineConfig } from 'vite'

// The dev server forwards the API and the live-collaboration socket to the Spanmark server. The Host
// header is kept (changeOrigin: false) so the server's Origin-matches-Host check passes for the dev origin.
const serverOrigin = `http://127.0.0.1:${process.env.SPANMARK_PORT ?? 5480}`

export default defineConfig({
  plugins: [vue()],
  resolve: {
    alias: {
      '@shared': fileURLToPath(new URL('./shared', import.meta.url)),
      '@': fileURLToPath(new URL('./app', import.meta.url)),
    },
  },
  build: {
    outDir: 'dist',
  },
  server: {
    proxy: {
      '/api': { target: serverOrigin, changeOrigin: false },
      '/collab': { target: serverOrigin, ws: true, changeOrigin: false },
    },
  },
})
