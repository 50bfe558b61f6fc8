/* SPDX-License-Identifier: GPL-3.0-or-later */
/* The request handlers the route table names, one group per h_*.c file. */
#ifndef WEFT_API_HANDLERS_H
#define WEFT_API_HANDLERS_H

/*
 * Each handler has the route_fn shape (api/routes.h): it runs on an HTTP
 * thread, reads the request (rq->param, rq->body, http_query()), calls the
 * service and sets a reply, or returns an error code with detail in e.
 * Write handlers reply 200 {"model_revision":N, ...} only after the
 * service reports the write committed.
 */

#include <stdint.h>

struct err;
struct req;

/* h_health.c */
int h_health(struct req *rq, struct err *e);

/* h_topology.c */
int h_topology_get(struct req *rq, struct err *e);
int h_topology_put(struct req *rq, struct err *e);
int h_link_get(struct req *rq, struct err *e);
int h_link_patch(struct req *rq, struct err *e);

/* h_matrix.c */
int h_matrices_list(struct req *rq, struct err *e);
int h_matrix_get(struct req *rq, struct err *e);
int h_matrix_put(struct req *rq, struct err *e);
int h_matrix_delete(struct req *rq, struct err *e);

/* h_policy.c */
int h_policy_get(struct req *rq, struct err *e);
int h_policy_put(struct req *rq, struct err *e);

/* h_import.c */
int h_import(struct req *rq, struct err *e);

/* h_plan.c */
int h_plan_summary(struct req *rq, struct err *e);
int h_plan_routes(struct req *rq, struct err *e);
int h_plan_loads(struct req *rq, struct err *e);
int h_model_export(struct req *rq, struct err *e);

/* h_fwd.c */
int h_plan_forwarding(struct req *rq, struct err *e);

/* h_snapshot.c */
int h_snapshot(struct req *rq, struct err *e);

/* h_diff.c */
int h_plan_diff(struct req *rq, struct err *e);

/* h_whatif.c */
int h_whatif(struct req *rq, struct err *e);

/* h_sweeps.c */
int h_sweep_start(struct req *rq, struct err *e);
int h_sweeps_list(struct req *rq, struct err *e);
int h_sweep_get(struct req *rq, struct err *e);
int h_sweep_cancel(struct req *rq, struct err *e);
int h_sweep_delete(struct req *rq, struct err *e);
int h_sweep_results_csv(struct req *rq, struct err *e);
int h_sweep_links_csv(struct req *rq, struct err *e);

/*
 * Not a route: reads the {id} segment of a sweep route (rq->param), a
 * positive decimal integer, into *idp.  Returns 0, or ERR_NOTFOUND with
 * detail in e ("no sweep ...", where "id").
 */
int h_sweep_id(struct req *rq, int64_t *idp, struct err *e);

/* h_web.c */
int h_web_index(struct req *rq, struct err *e);
int h_web_file(struct req *rq, struct err *e);

/* h_report_svg.c */
int h_sweep_report_svg(struct req *rq, struct err *e);

/* h_metrics.c */
int h_metrics(struct req *rq, struct err *e);

/* h_events.c */
int h_events(struct req *rq, struct err *e);

#endif /* WEFT_API_HANDLERS_H */
