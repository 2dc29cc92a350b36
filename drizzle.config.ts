import { defineConfig } from "drizzle-kit";

// Generates SQL migrations from app/db/schema.ts into drizzle/ (`npm run db:generate`).
export default defineConfig({
  dialect: "postgresql",
  schema: "./app/db/schema.ts",
  out: "./drizzle",
});
