/* SPDX-License-Identifier: GPL-3.0-or-later */
/* The SQLite store: topology, named traffic matrices, policy, plan history. */
#ifndef WEFT_STORAGE_DB_H
#define WEFT_STORAGE_DB_H

/*
 * DESIGN
 * One database file in WAL mode (synchronous=FULL: an acknowledged write
 * survives power loss).  Every write runs in one IMMEDIATE transaction that
 * also bumps the model revision, so a write is either wholly there with its
 * new revision or not there at all.  A struct db is one connection: each
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
 * applies pending migrations.  Returns 0 and the connection in *dbp, or
 * ERR_DB / ERR_IO with detail in e.
 */
int db_open(const char *path, struct db **dbp, struct err *e);

/* Closes the connection; db may be NULL. */
void db_close(struct db *db);

/* The current model revision (0 for a new database). */
int db_revision(struct db *db, int64_t *revp, struct err *e);

/*
 * Replaces nodes and links with those of topo (demands and policy of topo
 * are ignored).  Stored matrices are kept as they are, also when they name
 * nodes topo does not have (see db_load_model()).  Returns 0 with the new
 * model revision in *revp, or ERR_INVALID (a bad or duplicate id, a bad
 * number) with where "nodes[i].field" or "links[i].field".
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

/* Changes one link; fields are applied when their has_ flag is set. */
struct link_patch {
	bool has_up, has_capacity, has_metric;
	bool up;
	double capacity_bps;
	double te_metric;
};
int db_patch_link(struct db *db, const char *id, const struct link_patch *lp,
    int64_t *revp, struct err *e);

/*
 * Reads the whole model the solver plans: topology, policy, and the
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

#endif /* WEFT_STORAGE_DB_H */
