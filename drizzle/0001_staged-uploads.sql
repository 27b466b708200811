CREATE TYPE "public"."upload_kind" AS ENUM('render', 'asset');--> statement-breakpoint
CREATE TYPE "public"."upload_status" AS ENUM('pending', 'finished', 'failed');--> statement-breakpoint
CREATE TABLE "uploads" (
	"id" uuid PRIMARY KEY DEFAULT gen_random_uuid() NOT NULL,
	"project_id" uuid NOT NULL,
	"kind" "upload_kind" NOT NULL,
	"status" "upload_status" DEFAULT 'pending' NOT NULL,
	"plan" jsonb NOT NULL,
	"received" jsonb DEFAULT '{}'::jsonb NOT NULL,
	"result_id" text,
	"error" text,
	"created_by" uuid,
	"created_at" timestamp with time zone DEFAULT now() NOT NULL,
	"finished_at" timestamp with time zone
);
--> statement-breakpoint
ALTER TABLE "uploads" ADD CONSTRAINT "uploads_project_id_projects_id_fk" FOREIGN KEY ("project_id") REFERENCES "public"."projects"("id") ON DELETE cascade ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "uploads" ADD CONSTRAINT "uploads_created_by_users_id_fk" FOREIGN KEY ("created_by") REFERENCES "public"."users"("id") ON DELETE set null ON UPDATE no action;--> statement-breakpoint
CREATE INDEX "uploads_status_idx" ON "uploads" USING btree ("status","created_at");--> statement-breakpoint
CREATE INDEX "uploads_project_idx" ON "uploads" USING btree ("project_id");