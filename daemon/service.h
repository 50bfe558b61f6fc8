/* SPDX-License-Identifier: GPL-3.0-or-later */
/* What the HTTP layer may ask of the daemon: writes, reads, the live plan. */
#ifndef WEFT_DAEMON_SERVICE_H
#define WEFT_DAEMON_SERVICE_H

/*
 * DESIGN
 * The service owns the API's database connection (behind a mutex), the
 * solver thread and the published plan.  Writes commit to SQLite, then wake
 * the solver thread, and return the model revision they created: a write
 * is acknowledged only after its transaction commits.  Reads of the plan
 * never wait for a solve: service_plan_ref() hands out the newest published
 * plan under a reference count.  Every function here may be called from any
 * HTTP thread.
 */

#include <stdatomic.h>
#include <stdbool.h>
#include <stddef.h>
#include <stdint.h>

#include "engine/engine.h"
#include "planwait.h"
#include "../storage/db.h"

struct err;
struct service;
struct solver;

/*
 * A published plan: immutable once published.  The summary is
 * pre-rendered when published so readers only copy bytes; the routes and
 * loads, which grow with the matrix, are rendered from model and plan as
 * they are sent (api/plan_list.h).
 */
struct published {
	atomic_int refs;
	int64_t revision;	/* plan revision (ETag) */
	int64_t model_revision;	/* model revision the plan reflects */
	struct model *model;	/* owned: the snapshot solved */
	struct plan *plan;	/* owned; NULL when the solve failed */
	char *summary_json;	/* owned, NUL-terminated */
	size_t summary_len;
	char *metrics_text;	/* owned: the plan's part of GET /metrics
				   (api/metrics.h) */
	size_t metrics_len;
	size_t bytes;		/* memory of plan, model and texts, about */
};

/* Service settings, from the config. */
struct service_conf {
	const char *db_path;	/* borrowed for the service's lifetime */
	int debounce_ms;	/* quiet time before a re-solve */
	double solve_time_limit_s;
	int plan_history_keep;	/* plan summaries kept in SQLite */
	int workers;		/* threads for what-ifs and sweeps */
	int whatif_queue;	/* what-ifs that may wait for a worker */
	double whatif_time_limit_s;	/* per what-if or sweep scenario */
	long sweep_max_scenarios;	/* largest sweep accepted */
	int long_poll_max;	/* long polls that may wait at once */
	double long_poll_max_s;	/* longest wait a long poll may ask */
	int events_max;		/* event streams open at once */
	int events_keepalive_s;	/* keep-alive comment interval, s */
};

/*
 * Opens the database, starts the solver thread and queues a first solve.
 * Returns 0 or ERR_DB / ERR_IO / ERR_INTERNAL.  Called once, by main.
 */
int service_start(const struct service_conf *c, struct service **svcp,
    struct err *e);

/* Stops the solver thread (finishing nothing new), frees everything. */
void service_stop(struct service *svc);

/* Writes: each returns 0 with the new model revision in *revp. */
int service_put_topology(struct service *svc, const struct model *topo,
    int64_t *revp, struct err *e);
int service_put_matrix(struct service *svc, const char *name,
    const struct matrix *mx, int64_t *revp, struct err *e);
int service_delete_matrix(struct service *svc, const char *name,
    int64_t *revp, struct err *e);
int service_put_policy(struct service *svc, const struct policy *p,
    int64_t *revp, struct err *e);
int service_patch_link(struct service *svc, const char *id,
    const struct link_patch *lp, int64_t *revp, struct err *e);
int service_put_network(struct service *svc, const struct model *net,
    const char *matrix, int64_t *revp, struct err *e);

/* Reads from SQLite; results belong to the caller. */
int service_get_topology(struct service *svc, struct model **mp,
    struct err *e);
int service_get_matrix(struct service *svc, const char *name,
    struct matrix **mxp, struct err *e);
int service_list_matrices(struct service *svc, struct db_name **namesp,
    size_t *np, struct err *e);
int service_revision(struct service *svc, int64_t *revp, struct err *e);

/* What the solver is doing, for health and monitoring. */
struct service_status {
	int64_t model_revision;		/* newest committed model revision */
	int64_t plan_revision;		/* newest published plan, 0 if none */
	int64_t plan_model_revision;	/* model revision that plan reflects */
	bool last_solve_failed;		/* the newest solve attempt failed */
	int64_t failed_model_revision;	/* the revision it failed on */
	char last_error[256];		/* its message, "" if none */
};
int service_status(struct service *svc, struct service_status *st,
    struct err *e);

/*
 * Returns the newest published plan with a reference taken, or NULL if
 * none has been published yet.  Release it with service_plan_unref().
 */
struct published *service_plan_ref(struct service *svc);
void service_plan_unref(struct published *p);

#define SERVICE_PLANS_KEPT	32	/* plans kept for diffs, page cursors */
/* Beyond the newest SERVICE_PLANS_MIN, kept plans are dropped, oldest
   first, once together they hold more than SERVICE_PLANS_BYTES (a plan of
   a 567,762-demand matrix holds about 150 MB). */
#define SERVICE_PLANS_MIN	2
#define SERVICE_PLANS_BYTES	((size_t)1 << 30)

/*
 * Returns published plan revision rev with a reference taken, or NULL
 * when it is not among the plans kept (the last SERVICE_PLANS_KEPT
 * published, fewer when they are large: SERVICE_PLANS_BYTES) or was
 * never published.  Release it with service_plan_unref().  The kept
 * plans hold their model snapshots; after a restart none is kept.
 */
struct published *service_plan_ref_rev(struct service *svc, int64_t rev);

/*
 * Sets *oldestp and *newestp to the oldest and newest kept plan
 * revisions; both 0 when none is kept.
 */
void service_plans_kept(struct service *svc, int64_t *oldestp,
    int64_t *newestp);

/*
 * Writes the LP of the published plan's model (stage as in struct
 * solve_opts: -1 for the last) in format into a new buffer *textp of
 * *lenp bytes, which the caller frees.  ERR_NOTFOUND when no plan exists.
 */
int service_export_model(struct service *svc, enum export_format format,
    int stage, char **textp, size_t *lenp, struct err *e);

/*
 * The live plan with the seed of the master it came from, for what-ifs
 * and sweeps: pub is the published plan (a reference), sd its seed (NULL
 * when that plan was not solved by a kept path master).  Immutable.
 */
struct seed_box {
	atomic_int refs;
	struct published *pub;
	struct engine_seed *sd;
};

/* The newest live plan's box with a reference taken; NULL before the
   first plan.  Release with service_seed_unref() on any thread. */
struct seed_box *service_seed_ref(struct service *svc);
void service_seed_unref(struct seed_box *b);

/* The service's settings, its worker pool and its sweeps. */
const struct service_conf *service_conf(const struct service *svc);
struct workers *service_workers(struct service *svc);
struct sweeps *service_sweeps(struct service *svc);

/* The monitoring counters (daemon/stats.h); live as long as svc. */
struct stats *service_stats(struct service *svc);

/* The change notifications (daemon/events.h); live as long as svc. */
struct events *service_events(struct service *svc);

/* The solver thread (solver_thread.h), for the watchdog's liveness check;
   lives as long as svc. */
struct solver *service_solver(struct service *svc);

/*
 * Long polls (daemon/planwait.h): asks for fn(ctx, why) once a plan newer
 * than after is published, or after wait_ms, or when the daemon stops.
 * Returns 0 with *queuedp true (fn will be called, on another thread), or
 * false (a newer plan exists now; fn is not called); ERR_BUSY when
 * long_poll_max polls wait already or the daemon is stopping.
 */
int service_plan_wait(struct service *svc, int64_t after, double wait_ms,
    planwait_fn *fn, void *ctx, bool *queuedp, struct err *e);

/* Long polls waiting now. */
int service_plan_waiters(struct service *svc);

/*
 * The API connection, for the sweep runner's writes and reads (which do
 * not change the model revision): lock, use, unlock.
 */
struct db *service_db_lock(struct service *svc);
void service_db_unlock(struct service *svc);

/* Loads a stored matrix by name (ERR_NOTFOUND when absent). */
int service_load_matrix(struct service *svc, const char *name,
    struct matrix **mxp, struct err *e);

/*
 * Stops what-ifs and sweeps: a running sweep is marked interrupted, queued
 * what-ifs are answered busy, worker threads end; answers every long poll
 * and ends every event stream.  Called before the HTTP server stops (a
 * deferred request or a suspended stream must be answered first), then
 * service_stop().
 */
void service_quiesce(struct service *svc);

/*
 * API tokens and the audit log (storage/auth.c), through the API's
 * connection.  service_tokens() lists the tokens not revoked into a new
 * array (free()) of *np; service_audit() appends one row to the audit log.
 */
int service_tokens(struct service *svc, struct db_token **tp, size_t *np,
    struct err *e);
int service_audit(struct service *svc, const struct db_audit *a,
    struct err *e);

/*
 * Returns the model revision that the last successful write through the
 * service on the calling thread made since the previous call (0: none),
 * and forgets it.  The HTTP layer calls it around each handler, which
 * writes on its own thread, to put the revision in the audit log.
 */
int64_t service_write_revision_take(void);

#endif /* WEFT_DAEMON_SERVICE_H */
