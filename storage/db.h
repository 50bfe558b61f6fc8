/* SPDX-License-Identifier: GPL-3.0-or-later */
/* The SQLite store: topology, named traffic matrices, policy, plan history,
   survivability sweeps. */
#ifndef WEFT_STORAGE_DB_H
#define WEFT_STORAGE_DB_H

/*
 * DESIGN
 * One database file in WAL mode (synchronous=FULL: an acknowledged write
 * survives power loss).  Every model write runs in one IMMEDIATE
 * transaction that also bumps the model revision, so a write is either
 * wholly there with its new revision or not there at all.  Plan records
 * and sweeps are not model writes: they leave the revision alone (a bump
 * would make the solver plan again).  A struct db is one connection: each
 * thread opens its own (the solver thread one, the API one guarded by the
 * caller's mutex).  SQL only through prepared statements with bound
 * parameters.  Schema changes are numbered migrations applied at open.
 * storage uses engine model types as data only.
 */

#include <stdbool.h>
#include <stddef.h>
#include <stdint.h>

#include "../daemon/engine/model.h"

struct err;
struct db;

/*
 * Opens (creating if needed) the database at path, sets WAL and pragmas,
 * applies pending migrations.  When no other connection of this process
 * has the file open, every sweep still "running" is set to "interrupted"
 * (its process crashed or stopped while it ran), with finished_at now; a
 * second connection opened while the first is open leaves sweeps alone,
 * so a thread may open its own connection while a sweep runs.  Returns 0
 * and the connection in *dbp, or ERR_DB / ERR_IO with detail in e.
 */
int db_open(const char *path, struct db **dbp, struct err *e);

/* Closes the connection; db may be NULL. */
void db_close(struct db *db);

/* The current model revision (0 for a new database). */
int db_revision(struct db *db, int64_t *revp, struct err *e);

/*
 * Replaces nodes and links, with the links' SRLGs, with those of topo
 * (demands and policy of topo are ignored).  Stored matrices are kept as
 * they are, also when they name nodes topo does not have (see
 * db_load_model()).  Returns 0 with the new model revision in *revp, or
 * ERR_INVALID (a bad or duplicate id, a bad number, more than
 * MODEL_SRLG_MAX SRLGs) with where "nodes[i].field" or "links[i].field".
 */
int db_put_topology(struct db *db, const struct model *topo, int64_t *revp,
    struct err *e);

/*
 * Replaces (or creates) matrix name with mx.  Every node id must exist in
 * the stored topology at the time of the put: ERR_INVALID with where
 * "demands[i].src|dst" otherwise.  *revp is the new revision.
 */
int db_put_matrix(struct db *db, const char *name, const struct matrix *mx,
    int64_t *revp, struct err *e);

/* Deletes matrix name: ERR_NOTFOUND if absent. */
int db_delete_matrix(struct db *db, const char *name, int64_t *revp,
    struct err *e);

/*
 * Replaces topology and matrix name in one transaction (the importers' use):
 * topo's nodes and links, and its demands as the matrix.  Other matrices
 * are kept as they are, as in db_put_topology().
 */
int db_put_network(struct db *db, const struct model *net, const char *name,
    int64_t *revp, struct err *e);

/*
 * Stores the policy.  If p->matrix names no stored matrix the policy is
 * still stored (the plan will be empty until the matrix exists).
 */
int db_put_policy(struct db *db, const struct policy *p, int64_t *revp,
    struct err *e);

/*
 * Changes one link; fields are applied when their has_ flag is set.  With
 * has_srlgs, the link's SRLGs become exactly srlgs[0..n_srlgs) (repeats
 * count once; n_srlgs 0 takes the link out of every SRLG): ERR_INVALID at
 * "srlgs" for more than MODEL_SRLG_MAX.  ERR_NOTFOUND at "id" for an
 * unknown link.
 */
struct link_patch {
	bool has_up, has_capacity, has_metric, has_srlgs;
	bool up;
	double capacity_bps;
	double te_metric;
	uint32_t srlgs[MODEL_SRLG_MAX];	/* the new SRLGs, any order */
	size_t n_srlgs;
};
int db_patch_link(struct db *db, const char *id, const struct link_patch *lp,
    int64_t *revp, struct err *e);

/*
 * Reads the whole model the solver plans: topology (links with their
 * SRLGs, ascending), policy, and the
 * policy's matrix as demands (none if it does not exist), with the
 * revision, in one read transaction.  A demand whose src or dst is not a
 * node of the stored topology is not in (*mp)->demands; such demands are
 * counted in (*mp)->n_unplaced and their rates summed in unplaced_bps.
 * *mp is new and the caller's.
 */
int db_load_model(struct db *db, struct model **mp, struct err *e);

/* Reads topology and policy only (no demands). */
int db_load_topology(struct db *db, struct model **mp, struct err *e);

/* Reads matrix name: ERR_NOTFOUND if absent. *mxp is the caller's. */
int db_load_matrix(struct db *db, const char *name, struct matrix **mxp,
    struct err *e);

/* Lists matrix names with their demand counts; the caller frees with
   db_names_free. */
struct db_name {
	char *name;
	size_t n_demands;
	double total_bps;
};
int db_list_matrices(struct db *db, struct db_name **namesp, size_t *np,
    struct err *e);
void db_names_free(struct db_name *names, size_t n);

/*
 * Records a published plan summary (JSON text made by the caller) in the
 * plan history, keeping at most keep rows.
 */
int db_record_plan(struct db *db, int64_t plan_revision, int64_t
    model_revision, const char *summary_json, int keep, struct err *e);

/* The highest plan revision recorded (0 if none), so restarts continue
   counting. */
int db_last_plan_revision(struct db *db, int64_t *revp, struct err *e);

/*
 * Survivability sweeps.  None of these writes is a model change: the model
 * revision stays as it is.  JSON texts are the caller's and kept as they
 * are given.  Numbers of a result that are NaN are stored as SQL NULL and
 * read back as NaN.  ids are never reused, also after a delete.
 */
struct db_sweep {
	int64_t id;
	char kind[16];		/* "links", "nodes", "srlgs", "link-pairs" */
	char state[16];		/* "running", "done", "cancelled",
				   "interrupted", "failed" */
	int64_t model_revision, plan_revision;
	long total, done;	/* scenarios in all, finished so far */
	double elapsed_s;	/* seconds of running so far */
	char created_at[32], finished_at[32];	/* ISO 8601 UTC
				   "2026-12-02T07:10:00Z"; "" when not
				   finished */
	char *params_json;	/* owned: the request, normalised by the
				   caller */
	char *report_json;	/* owned, NULL until finished with a report */
	char *error;		/* owned, NULL unless failed */
};
struct db_sweep_result {
	long idx;		/* the scenario's index in the sweep, >= 0 */
	char *fail_json;	/* owned: e.g. {"links":["L1","L2"]} */
	char status[16];	/* "optimal", "partial", "empty", "failed" */
	char *error;		/* owned, NULL unless failed */
	double max_util, carried_bps, unserved_bps, total_cost, solve_ms,
	    moved_bps;		/* as the scenario's plan gives them */
};

/*
 * Creates a sweep of kind ("links", "nodes", "srlgs", "link-pairs") over
 * total scenarios (>= 0) in state "running", done 0, created_at now.
 * Returns 0 and its id in *idp, or ERR_INVALID at "kind", "total" or
 * "params_json" (NULL).
 */
int db_sweep_create(struct db *db, const char *kind, int64_t model_rev,
    int64_t plan_rev, long total, const char *params_json, int64_t *idp,
    struct err *e);

/*
 * Inserts the n results rs (rs may be NULL when n is 0) and sets done and
 * elapsed_s, in one transaction.  ERR_NOTFOUND at "id" for an unknown
 * sweep; ERR_INVALID for done outside [0, total], a negative or
 * non-finite elapsed_s, or a result with an idx outside [0, total), no
 * fail_json or an unknown status ("results[i].field", i counting rs);
 * ERR_CONFLICT at "results[i].idx" for an idx already stored.  Nothing is
 * written on failure.  Any state is accepted (a cancelled sweep may still
 * store the scenarios that were in progress).
 */
int db_sweep_progress(struct db *db, int64_t id, long done, double elapsed_s,
    const struct db_sweep_result *rs, size_t n, struct err *e);

/*
 * Sets the final state ("done", "cancelled", "interrupted" or "failed";
 * anything else is ERR_INVALID at "state"), elapsed_s, finished_at (now),
 * report_json and error (either may be NULL, which clears it).
 * ERR_NOTFOUND at "id" for an unknown sweep.  A sweep finished before is
 * finished again (the last call wins).
 */
int db_sweep_finish(struct db *db, int64_t id, const char *state,
    double elapsed_s, const char *report_json, const char *error,
    struct err *e);

/*
 * Reads sweep id into *sp (new, the caller's: db_sweep_free()), all
 * members filled.  ERR_NOTFOUND at "id" when absent.
 */
int db_sweep_get(struct db *db, int64_t id, struct db_sweep **sp,
    struct err *e);

/*
 * Reads the results of sweep id, by idx ascending, into *rp (new array of
 * *np, the caller's: db_sweep_results_free(); NULL when none).
 * ERR_NOTFOUND at "id" when the sweep is absent.
 */
int db_sweep_results(struct db *db, int64_t id, struct db_sweep_result **rp,
    size_t *np, struct err *e);

/*
 * Lists every sweep, newest (highest id) first, into *sp (new array of *np,
 * the caller's: db_sweeps_free(); NULL when none).  params_json and
 * report_json are left NULL; error is filled.
 */
int db_sweep_list(struct db *db, struct db_sweep **sp, size_t *np,
    struct err *e);

/*
 * Deletes sweep id and its results.  ERR_NOTFOUND at "id" when absent;
 * ERR_CONFLICT at "id" when it is running (cancel it first).
 */
int db_sweep_delete(struct db *db, int64_t id, struct err *e);

/* Frees one sweep from db_sweep_get(); s may be NULL. */
void db_sweep_free(struct db_sweep *s);

/* Frees an array of n sweeps from db_sweep_list(); s may be NULL. */
void db_sweeps_free(struct db_sweep *s, size_t n);

/* Frees an array of n results from db_sweep_results(); r may be NULL. */
void db_sweep_results_free(struct db_sweep_result *r, size_t n);

/*
 * API tokens and the audit log (storage/auth.c).  Neither is a model
 * change: the model revision stays as it is.  The token text itself is
 * never stored: the caller (api/auth.c) makes the token, its selector,
 * salt and hash, and hands over only those three.
 */
#define DB_TOKEN_SELECTOR_LEN	16	/* selector characters */
#define DB_TOKEN_SALT_LEN	16	/* salt bytes */
#define DB_TOKEN_HASH_LEN	32	/* hash bytes: SHA-256 */
#define DB_TOKEN_NAME_MAX	64	/* name bytes */

struct db_token {
	int64_t id;
	char selector[DB_TOKEN_SELECTOR_LEN + 1];	/* public part */
	char role[16];		/* "read", "operate" or "admin" */
	char name[DB_TOKEN_NAME_MAX + 1];	/* "" when none was given */
	uint8_t salt[DB_TOKEN_SALT_LEN];
	uint8_t hash[DB_TOKEN_HASH_LEN];	/* SHA-256(salt || token) */
	char created_at[32];	/* ISO 8601 UTC */
	char revoked_at[32];	/* ISO 8601 UTC; "" while valid */
};

/*
 * Stores a new token (created_at now, not revoked) and returns its id in
 * *idp.  ERR_INVALID at "role" (not read, operate or admin), "name" (over
 * DB_TOKEN_NAME_MAX bytes) or "selector" (not DB_TOKEN_SELECTOR_LEN
 * characters); ERR_CONFLICT at "selector" when another token has it.
 * name may be NULL (none).
 */
int db_token_add(struct db *db, const char *selector, const char *role,
    const char *name, const uint8_t salt[DB_TOKEN_SALT_LEN],
    const uint8_t hash[DB_TOKEN_HASH_LEN], int64_t *idp, struct err *e);

/*
 * Lists tokens by id ascending into *tp (new array of *np, the caller's,
 * free(); NULL when none): every token, or with valid_only those not
 * revoked.
 */
int db_token_list(struct db *db, bool valid_only, struct db_token **tp,
    size_t *np, struct err *e);

/*
 * Revokes token id (revoked_at now).  *wasp (may be NULL) is set true
 * when it was revoked already (then nothing changes).  ERR_NOTFOUND at
 * "id" for an unknown token.
 */
int db_token_revoke(struct db *db, int64_t id, bool *wasp, struct err *e);

/* One row of the audit log (see storage/schema/004_auth.sql). */
struct db_audit {
	const char *who;	/* borrowed: token name, "local", ... */
	int64_t token_id;	/* 0: no token was accepted */
	const char *client;	/* borrowed: client address, may be NULL */
	const char *method;	/* borrowed */
	const char *path;	/* borrowed */
	int status;		/* HTTP status of the reply */
	int64_t model_revision;	/* 0: the request made none */
	const char *request_id;	/* borrowed, may be NULL */
};

/* Appends a row (at now) to the audit log, in its own transaction. */
int db_audit_add(struct db *db, const struct db_audit *a, struct err *e);

/*
 * Opens the database as db_open() does, for a short-lived second process
 * (the token commands): running sweeps are left alone, because the
 * daemon that runs them may well be alive.
 */
int db_open_tool(const char *path, struct db **dbp, struct err *e);

#endif /* WEFT_STORAGE_DB_H */
