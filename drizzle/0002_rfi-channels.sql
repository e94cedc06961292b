CREATE TABLE "rfi_channels" (
	"id" bigserial PRIMARY KEY NOT NULL,
	"run_id" uuid NOT NULL,
	"receiver" text NOT NULL,
	"channel" integer NOT NULL,
	"freq_mhz" double precision NOT NULL,
	"channel_mhz" double precision NOT NULL,
	"kind" text NOT NULL,
	"created_at" timestamp with time zone DEFAULT now() NOT NULL
);
--> statement-breakpoint
ALTER TABLE "rfi_channels" ADD CONSTRAINT "rfi_channels_run_id_runs_id_fk" FOREIGN KEY ("run_id") REFERENCES "public"."runs"("id") ON DELETE cascade ON UPDATE no action;--> statement-breakpoint
CREATE INDEX "rfi_channels_receiver_idx" ON "rfi_channels" USING btree ("receiver");--> statement-breakpoint
CREATE INDEX "rfi_channels_run_idx" ON "rfi_channels" USING btree ("run_id");