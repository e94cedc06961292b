import { defineConfig } from 'drizzle-kit';

// Migrations are generated from server/db/schema.ts into drizzle/ (`npx drizzle-kit generate`).
export default defineConfig({
  dialect: 'postgresql',
  schema: './server/db/schema.ts',
  out: './drizzle',
});
