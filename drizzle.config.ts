import { defineConfig } from 'drizzle-kit';

// Only `drizzle-kit generate` is used (it needs no database). Migrations are
// applied from code at start-up (server/db/migrate.ts); see DEVELOPERS.md.
export default defineConfig({
  dialect: 'mysql',
  schema: './server/db/schema/*.ts',
  out: './server/db/migrations',
});
