import { defineConfig } from 'vitest/config'

// The PostgreSQL-server path: run by scripts/with-postgres.sh with TILLER_TEST_DATABASE_URL set.
export default defineConfig({
  resolve: { tsconfigPaths: true },
  test: { environment: 'node', include: ['tests/postgres/**/*.test.ts'], testTimeout: 60_000, hookTimeout: 60_000, fileParallelism: false },
})
