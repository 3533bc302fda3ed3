import { defineConfig } from 'drizzle-kit'

// Read by drizzle-kit only (generate, studio); the server gets its file path from server/config.ts.
export default defineConfig({
  dialect: 'sqlite',
  schema: './db/schema/index.ts',
  out: './db/migrations',
  dbCredentials: { url: process.env.LIGHTSEAM_DB ?? 'data/lightseam.sqlite' },
  strict: true,
  verbose: true,
})
