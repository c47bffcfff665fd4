import { defineConfig } from 'drizzle-kit';

// Only `db:generate` reads this; the app applies migrations itself (src/lib/server/db/migrate.ts).
export default defineConfig({
  dialect: 'postgresql',
  schema: './src/lib/server/db/schema.ts',
  out: './drizzle',
  casing: 'snake_case',
  dbCredentials: { url: process.env['DATABASE_URL'] ?? 'postgres://localhost/fringewise' },
});
