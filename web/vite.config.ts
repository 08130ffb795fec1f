// Vite build of the earshot map front end. Everything (Leaflet, its CSS and
// images) is bundled; nothing is fetched from a CDN at run time.
import { defineConfig } from 'vite';

export default defineConfig({
  root: import.meta.dirname,
  base: '/',
  build: {
    outDir: 'dist',
    emptyOutDir: true,
    sourcemap: true,
    chunkSizeWarningLimit: 800,
  },
  server: {
    // `npx vite` in web/ for front-end work against a running `npm start`.
    proxy: { '/api': 'http://127.0.0.1:8080', '/signin': 'http://127.0.0.1:8080' },
  },
});
