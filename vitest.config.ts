import { defineConfig } from 'vitest/config'

// Unit and integration tests run in Node without the React Router plugin: faster and closer
// to how the server and the command line load the same modules.
export default defineConfig({
  resolve: { tsconfigPaths: true },
  test: {
    environment: 'node',
    include: ['tests/**/*.test.ts'],
    exclude: ['tests/e2e/**', 'tests/postgres/**', 'node_modules/**'],
    testTimeout: 60_000,
    hookTimeout: 60_000,
    pool: 'forks',
  },
})
