CREATE TABLE "baseline_checks" (
	"id" bigserial PRIMARY KEY NOT NULL,
	"pulsar_name" text NOT NULL,
	"kind" text NOT NULL,
	"status" text NOT NULL,
	"baseline_run_id" uuid,
	"n_failed" integer NOT NULL,
	"worst_deviation_sigma" double precision,
	"tolerance_sigma" double precision NOT NULL,
	"software_version" text,
	"checked_by" text,
	"created_at" timestamp with time zone DEFAULT now() NOT NULL
);
--> statement-breakpoint
ALTER TABLE "baseline_checks" ADD CONSTRAINT "baseline_checks_checked_by_user_id_fk" FOREIGN KEY ("checked_by") REFERENCES "public"."user"("id") ON DELETE no action ON UPDATE no action;--> statement-breakpoint
CREATE INDEX "baseline_checks_pulsar_idx" ON "baseline_checks" USING btree ("pulsar_name","kind","created_at");