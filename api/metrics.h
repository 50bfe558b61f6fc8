/* SPDX-License-Identifier: GPL-3.0-or-later */
/* GET /metrics: the text exposition formats and the HTTP request counters. */
#ifndef WEFT_API_METRICS_H
#define WEFT_API_METRICS_H

/*
 * DESIGN
 * The exposition is written in two formats: OpenMetrics 1.0
 * (application/openmetrics-text; version=1.0.0) and the older Prometheus
 * text format 0.0.4 (text/plain; version=0.0.4), chosen from the request's
 * Accept header.  The two differ only in a counter family's name on its
 * TYPE and HELP lines (OpenMetrics names the family without "_total"),
 * the UNIT lines (comments to the older format) and the closing "# EOF".
 *
 * The per-plan part (the plan's revisions, status, gap, unserved traffic
 * and every link direction's load, utilisation and headroom) has only
 * gauges, so one text serves both formats: it is rendered once, when the
 * plan is published (service.c), and copied into each reply.  The rest
 * is rendered per request from atomic counters: the daemon's (struct
 * stats) and the HTTP request counters kept here, counted by route
 * pattern, method and status when a request completes (http.c).
 *
 * Label values are escaped as both formats require (backslash, double
 * quote and line feed); numbers are printed with 17 significant digits,
 * so a scraper reads back the exact double the JSON API serves.
 */

#include <stdbool.h>
#include <stddef.h>
#include <stdint.h>

struct model;
struct plan;
struct stats;

#define METRICS_CTYPE_OPENMETRICS \
	"application/openmetrics-text; version=1.0.0; charset=utf-8"
#define METRICS_CTYPE_TEXT	"text/plain; version=0.0.4; charset=utf-8"

/*
 * Counts one finished request: route is the matched route's pattern and
 * method its method (both NULL when no route matched: counted as route
 * "unmatched"), status the HTTP status sent.  Any thread, lock-free
 * except the first time a route and method pair is seen.
 */
void metrics_count_request(const char *route, const char *method,
    int status);

/*
 * Renders the per-plan part for plan p of model m, published as plan
 * revision revision, into a new text *textp of *lenp bytes (the caller
 * frees it).  Any thread.
 */
void metrics_render_plan(const struct model *m, const struct plan *p,
    int64_t revision, char **textp, size_t *lenp);

/* What a scrape shows besides the plan's part. */
struct metrics_now {
	const char *plan_text;	/* borrowed: the published plan's part,
				   NULL before the first plan */
	size_t plan_len;
	int64_t model_revision;	/* newest committed */
	bool plan_current;	/* the plan reflects model_revision */
	bool last_solve_failed;
	const struct stats *stats;	/* borrowed */
	int long_polls;		/* waiting now */
	int event_streams;	/* open now */
};

/*
 * Renders a whole exposition in OpenMetrics (openmetrics true) or in the
 * text format 0.0.4 into a new text (the caller frees it); *lenp its
 * length.  Any thread.
 */
char *metrics_render(const struct metrics_now *mn, bool openmetrics,
    size_t *lenp);

/*
 * Content negotiation (RFC 9110, 12.5.1): true when the Accept header
 * accept (NULL: absent) prefers application/openmetrics-text to
 * text/plain, i.e. gives it a q-value above 0 and at least that of the
 * best range matching text/plain.
 */
bool metrics_wants_openmetrics(const char *accept);

#endif /* WEFT_API_METRICS_H */
