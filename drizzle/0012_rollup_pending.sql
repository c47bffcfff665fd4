CREATE TABLE "rollup_pending" (
	"gateway_id" text NOT NULL,
	"t0" bigint NOT NULL,
	CONSTRAINT "rollup_pending_gateway_id_t0_pk" PRIMARY KEY("gateway_id","t0")
);
