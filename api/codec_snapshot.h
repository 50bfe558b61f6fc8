/* SPDX-License-Identifier: GPL-3.0-or-later */
/* The model snapshot file: the live model and its plan's figures in one. */
#ifndef WEFT_API_CODEC_SNAPSHOT_H
#define WEFT_API_CODEC_SNAPSHOT_H

/*
 * DESIGN
 * A snapshot (docs/operations.md, "Sweeps on MPI") is one JSON object
 * that carries everything a program away from the daemon needs to sweep
 * the live model: the topology, the policy and the policy's matrix, each
 * in the shape the API reads and writes them, the model and plan
 * revisions, and the live plan's summary, so the reader can check that
 * it solves the same model to the same optimum.  GET /v1/snapshot
 * writes it here from the published plan's own model (api/h_snapshot.c);
 * `weft snapshot` puts it together from the API's reads
 * (api/client/cmd_snapshot.c); weft-mpisweep reads it here.
 *
 *   {"format": "weft-snapshot", "version": 1,
 *    "model_revision": 17, "plan_revision": 9,
 *    "topology": {"nodes": [...], "links": [...]},
 *    "policy": {"objective": ..., "matrix": "peak", ...},
 *    "matrix": {"name": "peak", "demands": [...]} or null,
 *    "plan": {"status": ..., "max_utilization": ..., ...}}
 *
 * The top level is strict (no unknown member); "topology", "policy" and
 * "matrix" go through the API's own strict decoders (codec_model.h);
 * "plan" is GET /v1/plan's summary, of which the members read below are
 * required and the others ignored (the summary may grow).  The demands
 * are placed as the daemon places the policy's matrix: entries naming a
 * node the topology lacks are left out and counted as unplaced.  Any
 * thread may call these functions.
 */

#include <stddef.h>
#include <stdint.h>

struct err;
struct model;

#define CODEC_SNAPSHOT_FORMAT	"weft-snapshot"
#define CODEC_SNAPSHOT_VERSION	1

struct snapshot {
	struct model *model;	/* owned: topology, policy, placed demands;
				   model->revision is model_revision */
	int64_t model_revision;	/* >= 1 */
	int64_t plan_revision;	/* >= 1 */
	char plan_status[16];	/* "optimal", "partial", "empty" */
	char formulation[16];	/* the plan's ("arc", "path", ...) */
	double max_util;	/* the plan's max_utilization, a fraction */
	double carried_bps, unserved_bps;
	double total_cost;	/* TE metric x bit/s */
};

/*
 * Reads snapshot text (any bytes, len of them) into *s.  Returns 0, or
 * ERR_INVALID with where the JSON path ("topology.links[3].a",
 * "plan.max_utilization", "version") and nothing kept in *s.  A plan
 * whose status is "failed" is ERR_INVALID at "plan.status": there is no
 * optimum to check against.  Free with codec_snapshot_clear().
 */
int codec_snapshot_decode(const char *text, size_t len, struct snapshot *s,
    struct err *e);

/*
 * The snapshot of model m, solved into the plan whose GET /v1/plan
 * summary is summary_json (NUL-terminated), at model revision model_rev
 * and plan revision plan_rev: "matrix" holds m's demands under the
 * policy's matrix name (null when the policy names none).  Returns a new
 * text of *lenp bytes plus a NUL, or NULL only if jansson fails.
 */
char *codec_snapshot_encode(const struct model *m, const char *summary_json,
    int64_t model_rev, int64_t plan_rev, size_t *lenp);

/* Frees what s owns and empties it. */
void codec_snapshot_clear(struct snapshot *s);

#endif /* WEFT_API_CODEC_SNAPSHOT_H */
