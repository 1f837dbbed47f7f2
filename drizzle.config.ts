import { defineConfig } from 'drizzle-kit'

// Migrations are generated from the one schema and applied at start by app/db/migrate.server.ts,
// on PGlite by default and on a PostgreSQL server when DATABASE_URL is set.
export default defineConfig({
  dialect: 'postgresql',
  schema: './app/db/schema.ts',
  out: './drizzle',
})
