/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Views several commands share: a plan summary, link loads, a scenario. */
#ifndef WEFT_CLIENT_SHOW_H
#define WEFT_CLIENT_SHOW_H

/*
 * The plan summary has one shape wherever it comes from: GET /v1/plan,
 * the plan of a what-if, or an offline solve rendered by
 * api/codec_plan.c.  These functions print it (and the link loads of
 * GET /v1/plan/loads) for people; the JSON views are defined here too.
 */

#include <stdio.h>

#include <jansson.h>

struct cli;
struct table;

/* Prints summary plan (GET /v1/plan's members) as "key  value" lines. */
void show_plan(const json_t *plan, FILE *f);

/* One line: "plan revision 9 (model revision 17): optimal, ...". */
void show_plan_line(const json_t *plan, FILE *f);

/*
 * The exit code a plan gives a command that reports it: RC_PARTIAL for
 * status "partial", RC_FAILED for "failed" (or no status), else RC_OK.
 */
int show_plan_rc(const json_t *plan);

/*
 * Link directions of loads (GET /v1/plan/loads), one row per direction,
 * most utilised first (least first with ascending), at most top rows (0:
 * all).  With c->json, prints the defined JSON view instead:
 * {"revision", "model_revision", "max_utilization", "directions": [{"link",
 * "from", "to", "state", "capacity_bps", "load_bps", "utilization",
 * "headroom_bps", "shadow_price", "saturated"}]} with the daemon's numbers.
 * Returns 0, or -1 when the JSON could not be written.
 */
int show_loads(const struct cli *c, const json_t *loads, long top,
    bool ascending, FILE *f);

/* Adds the cells of one row of a show_list() table, for element v. */
typedef void show_row_fn(struct table *t, const json_t *v, const void *ctx);

/* The columns of a show_list() table. */
struct show_cols {
	const char *align;		/* one 'l' or 'r' per column */
	const char *const *heads;	/* one header text per column */
	show_row_fn *row;		/* adds one element's cells */
};

/*
 * Prints the line fmt, ... (printf-style, without its newline), then
 * the first top elements of array arr as a table of cols, one row each
 * made by cols->row(t, element, ctx), indented by two spaces.  Prints
 * nothing when arr is empty (or NULL).
 */
void show_list(FILE *f, const struct show_cols *cols, const json_t *arr,
    long top, const void *ctx, const char *fmt, ...)
    __attribute__((format(printf, 6, 7)));

/*
 * A show_row_fn for a demand: four cells, its "src", "dst", "priority"
 * and "rate_bps" (columns SRC, DST, PRIO, RATE aligned "llrr"); ctx is
 * not used.
 */
show_row_fn show_demand_row;

/*
 * A show_row_fn for a link direction: three cells, its "link", "from"
 * and "to" (columns LINK, FROM, TO aligned "lll"); ctx is not used.
 */
show_row_fn show_direction_row;

/*
 * What a scenario fails, from a sweep result's "fail" member:
 * "links L1, L2", "node N3", "srlg 12".  Writes into buf of size n.
 */
char *show_fail(const json_t *fail, char *buf, size_t n);

#endif /* WEFT_CLIENT_SHOW_H */
