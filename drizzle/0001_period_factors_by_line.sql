ALTER TABLE "periods" ADD COLUMN "demand_factor_by_line" jsonb;--> statement-breakpoint
ALTER TABLE "periods" ADD COLUMN "teams_factor_by_line" jsonb;