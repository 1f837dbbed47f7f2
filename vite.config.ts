import { reactRouter } from '@react-router/dev/vite'
import tailwindcss from '@tailwindcss/vite'
import { defineConfig } from 'vite'

export default defineConfig({
  plugins: [tailwindcss(), reactRouter()],
  resolve: { tsconfigPaths: true },
  optimizeDeps: {
    // Pre-bundle client libraries up front so the first page load does not trigger a reload.
    include: ['smoothie', 'zustand', 'fili', 'ml-matrix', 'remix-utils/sse/react', 'uplot', '@tanstack/react-table'],
    // PGlite ships WASM and must not be pre-bundled; drizzle's pglite driver imports it.
    exclude: ['@electric-sql/pglite', 'drizzle-orm', 'drizzle-orm/pglite', 'drizzle-orm/pglite/migrator'],
  },
  ssr: {
    external: ['@electric-sql/pglite', 'pg', 'smtp-server', 'nodemailer', 'ws'],
  },
})
