/* SPDX-License-Identifier: GPL-3.0-or-later */
/* The exposition texts of GET /metrics and the HTTP request counters. */

/*
 * DESIGN
 * See metrics.h.  Text is built in a growing buffer (struct out).  The
 * request counters are slots, one per route pattern and method seen,
 * each with one counter per status code; a slot is claimed once under
 * slot_mu and published by raising n_slots, so counting and reading need
 * no lock.  Metric names follow the Prometheus conventions: a "weft_"
 * prefix, the unit as a suffix (seconds, bits_per_second, ratio) and
 * "_total" on counters.  Rates stay in bit/s, the unit of the trade and of
 * the JSON API, although Prometheus's linter prefers bytes.
 */

#include <math.h>
#include <pthread.h>
#include <stdarg.h>
#include <stdatomic.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <strings.h>

#include "metrics.h"
#include "../daemon/base/xalloc.h"
#include "../daemon/engine/model.h"
#include "../daemon/engine/plan.h"
#include "../daemon/stats.h"

/* ---- the text buffer ---- */

struct out {
	char *s;
	size_t len, cap;
};

static void
grow(struct out *o, size_t more)
{
	size_t cap;

	if (o->len + more + 1 <= o->cap)
		return;
	cap = o->cap == 0 ? 4096 : o->cap;
	while (cap < o->len + more + 1)
		cap *= 2;
	o->s = xreallocarray(o->s, 1, cap);
	o->cap = cap;
}

static void
put(struct out *o, const char *s, size_t n)
{
	grow(o, n);
	memcpy(o->s + o->len, s, n);
	o->len += n;
	o->s[o->len] = '\0';
}

static void __attribute__((format(printf, 2, 3)))
putf(struct out *o, const char *fmt, ...)
{
	va_list ap;
	int n;

	va_start(ap, fmt);
	n = vsnprintf(NULL, 0, fmt, ap);
	va_end(ap);
	if (n < 0)
		return;
	grow(o, (size_t)n);
	va_start(ap, fmt);
	vsnprintf(o->s + o->len, (size_t)n + 1, fmt, ap);
	va_end(ap);
	o->len += (size_t)n;
}

/* A label value, escaped: \ as \\, " as \", line feed as \n. */
static void
put_label(struct out *o, const char *v)
{
	size_t n;

	while (*v != '\0') {
		n = strcspn(v, "\\\"\n");
		put(o, v, n);
		v += n;
		if (*v == '\0')
			break;
		put(o, *v == '\\' ? "\\\\" : *v == '"' ? "\\\"" : "\\n", 2);
		v++;
	}
}

/* A sample value: 17 significant digits, or NaN, +Inf, -Inf. */
static void
put_num(struct out *o, double x)
{
	if (isnan(x))
		put(o, "NaN", 3);
	else if (isinf(x))
		put(o, x > 0 ? "+Inf" : "-Inf", 4);
	else
		putf(o, "%.17g", x);
}

/*
 * A family's metadata.  For a counter, name is the family's name without
 * "_total"; the 0.0.4 format names the family after its sample.  unit
 * (NULL: none) is written as OpenMetrics' UNIT line, which the 0.0.4
 * format reads as a comment.
 */
static void
family(struct out *o, bool om, const char *name, const char *type,
    const char *unit, const char *help)
{
	const char *suffix = !om && strcmp(type, "counter") == 0 ?
	    "_total" : "";

	putf(o, "# HELP %s%s %s\n", name, suffix, help);
	putf(o, "# TYPE %s%s %s\n", name, suffix, type);
	if (unit != NULL && om)
		putf(o, "# UNIT %s %s\n", name, unit);
}

/* One gauge family with one unlabelled sample. */
static void
gauge1(struct out *o, bool om, const char *name, const char *unit,
    const char *help, double x)
{
	family(o, om, name, "gauge", unit, help);
	putf(o, "%s ", name);
	put_num(o, x);
	put(o, "\n", 1);
}

/* ---- the plan's part ---- */

/* The labels of link l in the direction arc a (2l: a->b, 2l+1: b->a). */
static void
arc_labels(struct out *o, const struct model *m, size_t a)
{
	const struct link *l = &m->links[a / 2];
	size_t from = a % 2 == 0 ? l->a : l->b, to = a % 2 == 0 ? l->b : l->a;

	put(o, "{link=\"", 7);
	put_label(o, l->id);
	put(o, "\",from=\"", 8);
	put_label(o, m->nodes[from].id);
	put(o, "\",to=\"", 6);
	put_label(o, m->nodes[to].id);
	put(o, "\"} ", 3);
}

enum arc_field { LOAD, UTIL, HEADROOM, CAPACITY };

static void
arc_family(struct out *o, const struct model *m, const struct plan *p,
    const char *name, const char *unit, const char *help,
    enum arc_field f)
{
	const struct plan_arc *pa;
	size_t a;

	/* Only gauges here: the text serves both formats, UNIT included. */
	family(o, true, name, "gauge", unit, help);
	for (a = 0; a < p->n_arcs && a < 2 * m->n_links; a++) {
		pa = &p->arcs[a];
		put(o, name, strlen(name));
		arc_labels(o, m, a);
		put_num(o, f == LOAD ? pa->load_bps : f == UTIL ? pa->util :
		    f == HEADROOM ? pa->headroom_bps : pa->capacity_bps);
		put(o, "\n", 1);
	}
}

void
metrics_render_plan(const struct model *m, const struct plan *p,
    int64_t revision, char **textp, size_t *lenp)
{
	static const enum plan_status all[] = { PLAN_OPTIMAL, PLAN_PARTIAL,
	    PLAN_EMPTY };
	struct out o = { 0 };
	size_t i;

	grow(&o, 256 + 4 * 160 * p->n_arcs);
	gauge1(&o, true, "weft_plan_revision", NULL,
	    "Revision of the published plan.", (double)revision);
	gauge1(&o, true, "weft_plan_model_revision", NULL,
	    "Model revision the published plan reflects.",
	    (double)m->revision);
	family(&o, true, "weft_plan_status", "gauge", NULL,
	    "Status of the published plan: 1 for its status, 0 for the "
	    "others.");
	for (i = 0; i < sizeof(all) / sizeof(all[0]); i++)
		putf(&o, "weft_plan_status{status=\"%s\"} %d\n",
		    plan_status_str(all[i]), p->status == all[i]);
	gauge1(&o, true, "weft_plan_gap_ratio", "ratio",
	    "Certified relative optimality gap of the plan's last stage.",
	    p->gap);
	gauge1(&o, true, "weft_plan_max_utilization_ratio", "ratio",
	    "Largest load over capacity of any up link direction.",
	    p->max_util);
	gauge1(&o, true, "weft_plan_demand_bits_per_second",
	    "bits_per_second", "Traffic demanded by the planned demands.",
	    p->demand_bps);
	gauge1(&o, true, "weft_plan_carried_bits_per_second",
	    "bits_per_second", "Traffic the plan carries.", p->carried_bps);
	family(&o, true, "weft_plan_unserved_bits_per_second", "gauge",
	    "bits_per_second", "Traffic the plan leaves unserved, by demand "
	    "priority (0 first).");
	for (i = 0; i < sizeof(p->unserved_by_prio_bps) /
	    sizeof(p->unserved_by_prio_bps[0]); i++) {
		putf(&o, "weft_plan_unserved_bits_per_second"
		    "{priority=\"%zu\"} ", i);
		put_num(&o, p->unserved_by_prio_bps[i]);
		put(&o, "\n", 1);
	}
	arc_family(&o, m, p, "weft_link_load_bits_per_second",
	    "bits_per_second", "Planned load of a link direction.", LOAD);
	arc_family(&o, m, p, "weft_link_utilization_ratio", "ratio",
	    "Planned load over capacity of a link direction.", UTIL);
	arc_family(&o, m, p, "weft_link_headroom_bits_per_second",
	    "bits_per_second", "Capacity times the policy's headroom minus "
	    "the planned load of a link direction.", HEADROOM);
	arc_family(&o, m, p, "weft_link_capacity_bits_per_second",
	    "bits_per_second", "Capacity of a link direction (0 when the "
	    "link is down).", CAPACITY);
	*textp = o.s;
	*lenp = o.len;
}

/* ---- HTTP request counters ---- */

#define SLOTS_MAX	128	/* route and method pairs counted */
#define STATUS_MIN	100
#define STATUS_MAX	599

struct slot {
	const char *route;	/* static: a route pattern, "unmatched" */
	const char *method;	/* static */
	atomic_ulong by_status[STATUS_MAX - STATUS_MIN + 1];
};

static struct slot slots[SLOTS_MAX];
static atomic_int n_slots;
static pthread_mutex_t slot_mu = PTHREAD_MUTEX_INITIALIZER;

/* A static word for a method that matched no route. */
static const char *
method_word(const char *method)
{
	static const char *const known[] = { "GET", "HEAD", "POST", "PUT",
	    "PATCH", "DELETE", "OPTIONS" };
	size_t i;

	for (i = 0; method != NULL && i < sizeof(known) / sizeof(known[0]);
	    i++)
		if (strcmp(method, known[i]) == 0)
			return known[i];
	return "other";
}

static struct slot *
find_slot(const char *route, const char *method)
{
	struct slot *sl = NULL;
	int i, n;

	n = atomic_load_explicit(&n_slots, memory_order_acquire);
	for (i = 0; i < n; i++)
		if (strcmp(slots[i].route, route) == 0 &&
		    strcmp(slots[i].method, method) == 0)
			return &slots[i];
	pthread_mutex_lock(&slot_mu);
	n = atomic_load_explicit(&n_slots, memory_order_relaxed);
	for (i = 0; i < n; i++)
		if (strcmp(slots[i].route, route) == 0 &&
		    strcmp(slots[i].method, method) == 0)
			break;
	if (i < n) {
		sl = &slots[i];
	} else if (n < SLOTS_MAX) {
		sl = &slots[n];
		sl->route = route;
		sl->method = method;
		atomic_store_explicit(&n_slots, n + 1, memory_order_release);
	}
	pthread_mutex_unlock(&slot_mu);
	return sl;
}

void
metrics_count_request(const char *route, const char *method, int status)
{
	struct slot *sl;

	if (status < STATUS_MIN || status > STATUS_MAX)
		return;
	if (route == NULL) {
		route = "unmatched";
		method = method_word(method);
	}
	if ((sl = find_slot(route, method)) != NULL)
		atomic_fetch_add_explicit(&sl->by_status[status - STATUS_MIN],
		    1, memory_order_relaxed);
}

/* ---- the whole exposition ---- */

static void
counter1(struct out *o, bool om, const char *name, const char *help,
    unsigned long long x)
{
	family(o, om, name, "counter", NULL, help);
	putf(o, "%s_total %llu\n", name, x);
}

static void
http_requests(struct out *o, bool om)
{
	unsigned long x;
	int i, n, k;

	family(o, om, "weft_http_requests", "counter", NULL,
	    "HTTP requests answered, by route pattern, method and status.");
	n = atomic_load_explicit(&n_slots, memory_order_acquire);
	for (i = 0; i < n; i++) {
		for (k = 0; k <= STATUS_MAX - STATUS_MIN; k++) {
			x = atomic_load_explicit(&slots[i].by_status[k],
			    memory_order_relaxed);
			if (x == 0)
				continue;
			put(o, "weft_http_requests_total{route=\"", 32);
			put_label(o, slots[i].route);
			put(o, "\",method=\"", 10);
			put_label(o, slots[i].method);
			putf(o, "\",code=\"%d\"} %lu\n", k + STATUS_MIN, x);
		}
	}
}

/* The bucket bound as OpenMetrics' canonical number: 1 is "1.0". */
static void
put_le(struct out *o, double b)
{
	char buf[64];

	snprintf(buf, sizeof(buf), "%.15g", b);
	put(o, buf, strlen(buf));
	if (strpbrk(buf, ".e") == NULL)
		put(o, ".0", 2);
}

static void
solve_histogram(struct out *o, bool om, const struct stats *st)
{
	unsigned long long cum = 0;
	size_t i;

	family(o, om, "weft_solve_seconds", "histogram", "seconds",
	    "Wall time of the live solves that published a plan.");
	for (i = 0; i <= STATS_SOLVE_BUCKETS; i++) {
		cum += atomic_load(&st->solve_bucket[i]);
		put(o, "weft_solve_seconds_bucket{le=\"", 30);
		if (i < STATS_SOLVE_BUCKETS)
			put_le(o, stats_solve_bounds_s[i]);
		else
			put(o, "+Inf", 4);
		putf(o, "\"} %llu\n", cum);
	}
	put(o, "weft_solve_seconds_sum ", 23);
	put_num(o, (double)atomic_load(&st->solve_sum_us) / 1e6);
	putf(o, "\nweft_solve_seconds_count %llu\n", cum);
}

char *
metrics_render(const struct metrics_now *mn, bool om, size_t *lenp)
{
	const struct stats *st = mn->stats;
	struct out o = { 0 };
	int i;

	grow(&o, mn->plan_len + 8192);
	if (mn->plan_text != NULL)
		put(&o, mn->plan_text, mn->plan_len);
	gauge1(&o, om, "weft_model_revision", NULL,
	    "Newest committed model revision.", (double)mn->model_revision);
	gauge1(&o, om, "weft_plan_current", NULL,
	    "1 when the published plan reflects the newest model revision.",
	    mn->plan_current);
	gauge1(&o, om, "weft_solver_last_solve_failed", NULL,
	    "1 when the newest solve attempt failed (the last good plan "
	    "stays published).", mn->last_solve_failed);
	counter1(&o, om, "weft_solve_failures",
	    "Live solves that failed and published nothing.",
	    atomic_load(&st->solves_failed));
	solve_histogram(&o, om, st);
	http_requests(&o, om);
	family(&o, om, "weft_whatifs", "counter", NULL,
	    "What-ifs by outcome: ok (solved), failed, busy (refused), "
	    "stopped.");
	for (i = 0; i < STATS_WHATIF_N; i++)
		putf(&o, "weft_whatifs_total{outcome=\"%s\"} %lu\n",
		    stats_whatif_str((enum stats_whatif)i),
		    atomic_load(&st->whatif[i]));
	counter1(&o, om, "weft_sweeps_started", "Sweeps started.",
	    atomic_load(&st->sweeps_started));
	family(&o, om, "weft_sweeps_ended", "counter", NULL,
	    "Sweeps ended, by final state.");
	for (i = 0; i < STATS_SWEEP_N; i++)
		putf(&o, "weft_sweeps_ended_total{state=\"%s\"} %lu\n",
		    stats_sweep_str((enum stats_sweep)i),
		    atomic_load(&st->sweeps_ended[i]));
	counter1(&o, om, "weft_sweep_scenarios",
	    "Sweep scenarios solved (or failed).",
	    atomic_load(&st->sweep_scenarios));
	gauge1(&o, om, "weft_long_polls_waiting", NULL,
	    "GET /v1/plan?wait= requests waiting now.", mn->long_polls);
	gauge1(&o, om, "weft_event_streams_open", NULL,
	    "GET /v1/events streams open now.", mn->event_streams);
	if (om)
		put(&o, "# EOF\n", 6);
	*lenp = o.len;
	return o.s;
}

/* ---- content negotiation ---- */

/* Copies the trimmed n bytes at s into buf (size bn), lower case. */
static void
token(const char *s, size_t n, char *buf, size_t bn)
{
	size_t i = 0;

	while (n > 0 && (*s == ' ' || *s == '\t')) {
		s++;
		n--;
	}
	while (n > 0 && (s[n - 1] == ' ' || s[n - 1] == '\t'))
		n--;
	if (n >= 2 && s[0] == '"' && s[n - 1] == '"') {
		s++;
		n -= 2;
	}
	for (; i < n && i + 1 < bn; i++)
		buf[i] = (char)(s[i] >= 'A' && s[i] <= 'Z' ? s[i] - 'A' + 'a' :
		    s[i]);
	buf[i] = '\0';
}

/*
 * For one media range, sets how specifically it matches OpenMetrics and
 * text/plain (0: not at all, 1: any type, 2: type wildcard, 3: exactly)
 * and its q-value.
 */
static void
media_range(const char *s, size_t n, int *omp, int *textp, double *qp)
{
	const char *semi, *eq, *end = s + n;
	char type[64], key[16], val[32];
	bool version_om = true, version_text = true;
	double q = 1;
	char *qe;

	semi = memchr(s, ';', n);
	token(s, (size_t)((semi != NULL ? semi : end) - s), type,
	    sizeof(type));
	while (semi != NULL) {
		const char *p = semi + 1, *next;

		next = memchr(p, ';', (size_t)(end - p));
		eq = memchr(p, '=', (size_t)((next != NULL ? next : end) - p));
		if (eq != NULL) {
			token(p, (size_t)(eq - p), key, sizeof(key));
			token(eq + 1, (size_t)((next != NULL ? next : end) -
			    eq - 1), val, sizeof(val));
			if (strcmp(key, "q") == 0) {
				q = strtod(val, &qe);
				if (qe == val || q < 0 || q > 1)
					q = 0;
			} else if (strcmp(key, "version") == 0) {
				version_om = strcmp(val, "1.0.0") == 0 ||
				    strcmp(val, "0.0.1") == 0;
				version_text = strcmp(val, "0.0.4") == 0;
			}
		}
		semi = next;
	}
	*qp = q;
	*omp = strcmp(type, "*/*") == 0 ? 1 :
	    strcmp(type, "application/*") == 0 ? 2 :
	    strcmp(type, "application/openmetrics-text") == 0 && version_om ?
	    3 : 0;
	*textp = strcmp(type, "*/*") == 0 ? 1 : strcmp(type, "text/*") == 0 ?
	    2 : strcmp(type, "text/plain") == 0 && version_text ? 3 : 0;
}

bool
metrics_wants_openmetrics(const char *accept)
{
	const char *p, *comma;
	double q, q_om = 0, q_text = 0;
	int om, text, best_om = 0, best_text = 0;

	if (accept == NULL)
		return false;
	for (p = accept; *p != '\0'; p = comma + 1) {
		comma = strchr(p, ',');
		if (comma == NULL)
			comma = p + strlen(p);
		media_range(p, (size_t)(comma - p), &om, &text, &q);
		/* The most specific range decides; equals: the best q. */
		if (om > best_om || (om == best_om && om > 0 && q > q_om)) {
			best_om = om;
			q_om = q;
		}
		if (text > best_text || (text == best_text && text > 0 &&
		    q > q_text)) {
			best_text = text;
			q_text = q;
		}
		if (*comma == '\0')
			break;
	}
	if (best_om == 0 || q_om <= 0)
		return false;
	return q_om > q_text || (q_om == q_text && best_om > best_text);
}
