/* SPDX-License-Identifier: GPL-3.0-or-later */
/* The plan summary for people, and what a scenario fails. */
#include <math.h>
#include <stdarg.h>
#include <stdbool.h>
#include <stdio.h>
#include <string.h>

#include <jansson.h>

#include "show.h"
#include "client.h"
#include "fmt.h"
#include "js.h"
#include "table.h"

/* Explain lists longer than this are cut in the summary. */
#define EXPLAIN_ROWS	10

static void
bottleneck_row(struct table *t, const json_t *v, const void *ctx)
{
	char b[FMT_LEN];

	show_direction_row(t, v, ctx);
	table_cell(t, "%s", fmt_pct(b, js_num(v, "utilization")));
	table_cell(t, "%s", fmt_num(b, js_num(v, "shadow_price")));
}

void
show_direction_row(struct table *t, const json_t *v, const void *ctx)
{
	(void)ctx;
	table_cell(t, "%s", js_str(v, "link", "?"));
	table_cell(t, "%s", js_str(v, "from", "?"));
	table_cell(t, "%s", js_str(v, "to", "?"));
}

void
show_demand_row(struct table *t, const json_t *v, const void *ctx)
{
	char b[FMT_LEN];

	(void)ctx;
	table_cell(t, "%s", js_str(v, "src", "?"));
	table_cell(t, "%s", js_str(v, "dst", "?"));
	table_cell(t, "%lld", js_int(v, "priority", 0));
	table_cell(t, "%s", fmt_bps(b, js_num(v, "rate_bps")));
}

static void
explain(const json_t *x, FILE *f)
{
	static const char *const bh[] = { "LINK", "FROM", "TO", "UTIL",
		"SHADOW PRICE" };
	static const char *const ch[] = { "SRC", "DST", "PRIO", "RATE" };
	static const struct show_cols bottlenecks = { "lllrr", bh,
		bottleneck_row };
	static const struct show_cols cut_off = { "llrr", ch,
		show_demand_row };
	json_t *bn = js_arr(x, "bottleneck");
	char b[FMT_LEN];

	show_list(f, &bottlenecks, bn, EXPLAIN_ROWS, NULL,
	    "bottlenecks (largest shadow price first):");
	if (json_array_size(bn) > EXPLAIN_ROWS)
		fprintf(f, "  ... %zu more\n",
		    json_array_size(bn) - EXPLAIN_ROWS);
	if (js_int(x, "cut_off_total", 0) > 0)
		show_list(f, &cut_off, js_arr(x, "cut_off"), EXPLAIN_ROWS,
		    NULL, "demands cut off (no up path joins their ends): "
		    "%lld, %s", js_int(x, "cut_off_total", 0),
		    fmt_bps(b, js_num(x, "cut_off_bps")));
}

/* "0: 1.00 Gbit/s, 3: 2.00 Gbit/s" for the priorities with unserved. */
static void
by_priority(const json_t *plan, char *buf, size_t n)
{
	json_t *bp = js_obj(plan, "unserved_by_priority");
	char key[4], b[FMT_LEN];
	size_t len = 0;
	double v;
	int k;

	buf[0] = '\0';
	for (k = 0; k <= 7 && len < n; k++) {
		snprintf(key, sizeof(key), "%d", k);
		v = js_num(bp, key);
		if (!(v > 0))
			continue;
		len += (size_t)snprintf(buf + len, n - len, "%s%d: %s",
		    len > 0 ? ", " : "", k, fmt_bps(b, v));
	}
}

void
show_plan(const json_t *plan, FILE *f)
{
	struct table *t = table_new(2, "ll", NULL);
	const char *status = js_str(plan, "status", "?");
	char b[FMT_LEN], b2[FMT_LEN], list[512];
	json_t *w, *v;
	double demand, carried;
	size_t i;

	table_cell(t, "plan");
	/* Revision 0: a what-if's or an offline plan, never published. */
	if (js_int(plan, "revision", 0) == 0)
		table_cell(t, "not published (model revision %lld)",
		    js_int(plan, "model_revision", 0));
	else
		table_cell(t, "revision %lld of model revision %lld",
		    js_int(plan, "revision", 0), js_int(plan,
		    "model_revision", 0));
	table_cell(t, "status");
	table_cell(t, "%s", status);
	table_cell(t, "objective");
	table_cell(t, "%s", js_str(plan, "objective", "?"));
	table_cell(t, "matrix");
	table_cell(t, "%s", js_str(plan, "matrix", "(none)"));
	if (strcmp(status, "failed") != 0) {
		demand = js_num(plan, "demand_bps");
		carried = js_num(plan, "carried_bps");
		table_cell(t, "demand");
		table_cell(t, "%s", fmt_bps(b, demand));
		table_cell(t, "carried");
		table_cell(t, "%s (%s)", fmt_bps(b, carried),
		    fmt_pct(b2, demand > 0 ? carried / demand : 1));
		table_cell(t, "unserved");
		by_priority(plan, list, sizeof(list));
		table_cell(t, "%s%s%s%s", fmt_bps(b, js_num(plan,
		    "unserved_bps")), list[0] != '\0' ? " (by priority " : "",
		    list, list[0] != '\0' ? ")" : "");
		table_cell(t, "max utilisation");
		table_cell(t, "%s", fmt_pct(b, js_num(plan,
		    "max_utilization")));
		table_cell(t, "total cost");
		table_cell(t, "%s (TE metric x bit/s)", fmt_num(b,
		    js_num(plan, "total_cost")));
		table_cell(t, "congestion");
		table_cell(t, "%s", fmt_num(b, js_num(plan, "congestion")));
		table_cell(t, "solver");
		table_cell(t, "%s formulation, gap %s, %lld iterations, %s%s",
		    js_str(plan, "formulation", "?"),
		    fmt_num(b, js_num(plan, "gap")),
		    js_int(plan, "iterations", 0),
		    fmt_secs(b2, js_num(plan, "solve_ms") / 1000),
		    js_bool(plan, "warm") ? ", warm" : "");
		if (isfinite(js_num(plan, "moved_bps"))) {
			table_cell(t, "moved");
			table_cell(t, "%s since the previous plan",
			    fmt_bps(b, js_num(plan, "moved_bps")));
		}
		table_cell(t, "saturated links");
		js_join(js_arr(plan, "saturated_links"), ", ", list,
		    sizeof(list));
		table_cell(t, "%s", list[0] != '\0' ? list : "none");
	}
	if (js_int(plan, "unplaced_demands", 0) > 0) {
		table_cell(t, "unplaced");
		table_cell(t, "%lld demands, %s (nodes not in the topology)",
		    js_int(plan, "unplaced_demands", 0),
		    fmt_bps(b, js_num(plan, "unplaced_bps")));
	}
	w = js_arr(plan, "warnings");
	json_array_foreach(w, i, v) {
		table_cell(t, "warning");
		table_cell(t, "%s", json_is_string(v) ? json_string_value(v) :
		    "?");
	}
	table_print(t, f, "");
	table_free(t);
	if (strcmp(status, "failed") == 0)
		fprintf(f, "the solve failed; the daemon's log has the "
		    "reason\n");
	if (js_obj(plan, "explain") != NULL)
		explain(js_obj(plan, "explain"), f);
}

void
show_plan_line(const json_t *plan, FILE *f)
{
	char b1[FMT_LEN], b2[FMT_LEN], b3[FMT_LEN];

	fprintf(f, "plan revision %lld (model revision %lld): %s, max "
	    "utilisation %s, carried %s, unserved %s\n",
	    js_int(plan, "revision", 0), js_int(plan, "model_revision", 0),
	    js_str(plan, "status", "?"),
	    fmt_pct(b1, js_num(plan, "max_utilization")),
	    fmt_bps(b2, js_num(plan, "carried_bps")),
	    fmt_bps(b3, js_num(plan, "unserved_bps")));
}

int
show_plan_rc(const json_t *plan)
{
	const char *status = js_str(plan, "status", "failed");

	if (strcmp(status, "partial") == 0)
		return RC_PARTIAL;
	if (strcmp(status, "optimal") == 0 || strcmp(status, "empty") == 0)
		return RC_OK;
	return RC_FAILED;
}

char *
show_fail(const json_t *fail, char *buf, size_t n)
{
	static const char *const kinds[][2] = { { "links", "link" },
		{ "nodes", "node" }, { "srlgs", "srlg" } };
	json_t *a, *v;
	size_t k, i, len = 0;

	buf[0] = '\0';
	for (k = 0; k < 3 && len < n; k++) {
		if ((a = js_arr(fail, kinds[k][0])) == NULL ||
		    json_array_size(a) == 0)
			continue;
		len += (size_t)snprintf(buf + len, n - len, "%s%s ",
		    len > 0 ? "; " : "",
		    kinds[k][json_array_size(a) == 1 ? 1 : 0]);
		json_array_foreach(a, i, v) {
			if (len >= n)
				break;
			if (json_is_integer(v))
				len += (size_t)snprintf(buf + len, n - len,
				    "%s%lld", i > 0 ? ", " : "",
				    (long long)json_integer_value(v));
			else
				len += (size_t)snprintf(buf + len, n - len,
				    "%s%s", i > 0 ? ", " : "",
				    json_is_string(v) ?
				    json_string_value(v) : "?");
		}
	}
	return buf;
}

void
show_list(FILE *f, const struct show_cols *cols, const json_t *arr,
    long top, const void *ctx, const char *fmt, ...)
{
	struct table *t;
	json_t *v;
	va_list ap;
	size_t i;

	if (json_array_size(arr) == 0)
		return;
	va_start(ap, fmt);
	vfprintf(f, fmt, ap);
	va_end(ap);
	fputc('\n', f);
	t = table_new((int)strlen(cols->align), cols->align, cols->heads);
	json_array_foreach(arr, i, v) {
		if ((long)i == top)
			break;
		cols->row(t, v, ctx);
	}
	table_print(t, f, "  ");
	table_free(t);
}
