/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Unit tests of the /metrics texts: escaping, numbers, negotiation. */

/*
 * Expected texts come from the standards: OpenMetrics 1.0 (label values
 * escape backslash, double quote and line feed; counters end in _total;
 * a histogram's le is a canonical number, its buckets cumulative, +Inf
 * last; the exposition ends with "# EOF") and RFC 9110, 12.5.1 (the
 * q-values and the most specific media range decide).  The plan is built
 * here by hand.
 */

#include <stdlib.h>
#include <string.h>

#include "../../tap.h"
#include "../../../api/metrics.h"
#include "../../../daemon/base/err.h"
#include "../../../daemon/base/xalloc.h"
#include "../../../daemon/engine/model.h"
#include "../../../daemon/engine/plan.h"
#include "../../../daemon/stats.h"

static bool
has(const char *text, const char *line)
{
	return strstr(text, line) != NULL;
}

static void
test_plan_part(void)
{
	struct model *m = model_new();
	struct plan *p = xcalloc(1, sizeof(*p));
	struct err e = { 0 };
	char *text = NULL, *s, *end;
	size_t len = 0, i;

	TEST_START("escapes label values and prints exact numbers");
	model_add_node(m, "A", NULL, NULL, "n", &e);
	model_add_node(m, "N\"q\\", NULL, NULL, "n", &e);
	model_add_link(m, "L\"1\\x", "A", "N\"q\\", 1e10, 1, true, "l", &e);
	m->revision = 5;
	p->status = PLAN_PARTIAL;
	p->n_arcs = 2;
	p->arcs = xcalloc(2, sizeof(*p->arcs));
	p->arcs[0].load_bps = 1e9;
	p->arcs[0].util = 0.1;
	p->arcs[0].capacity_bps = 1e10;
	p->unserved_by_prio_bps[3] = 2.5e9;
	metrics_render_plan(m, p, 9, &text, &len);
	ASSERT_INT_EQ((long)len, (long)strlen(text));
	ASSERT_TRUE(has(text, "weft_link_utilization_ratio{link=\"L\\\"1\\\\x\","
	    "from=\"A\",to=\"N\\\"q\\\\\"} "));
	ASSERT_TRUE(has(text, "weft_link_utilization_ratio{link=\"L\\\"1\\\\x\","
	    "from=\"N\\\"q\\\\\",to=\"A\"} 0\n"));
	s = strstr(text, "weft_link_utilization_ratio{link=\"L\\\"1\\\\x\","
	    "from=\"A\"");
	ASSERT_TRUE(s != NULL);
	if (s != NULL) {
		s = strchr(s, '}') + 2;
		/* 17 digits: the very double 0.1 reads back. */
		ASSERT_TRUE(strtod(s, &end) == 0.1 && *end == '\n');
	}
	ASSERT_TRUE(has(text, "weft_plan_revision 9\n"));
	ASSERT_TRUE(has(text, "weft_plan_model_revision 5\n"));
	ASSERT_TRUE(has(text, "weft_plan_status{status=\"partial\"} 1\n"));
	ASSERT_TRUE(has(text, "weft_plan_status{status=\"optimal\"} 0\n"));
	ASSERT_TRUE(has(text, "weft_plan_unserved_bits_per_second{priority="
	    "\"3\"} 2500000000\n"));
	ASSERT_TRUE(has(text, "# UNIT weft_link_load_bits_per_second "
	    "bits_per_second\n"));
	/* Every family is announced once: TYPE lines are unique. */
	for (s = text, i = 0; (s = strstr(s, "# TYPE weft_link_load_")) != NULL;
	    s++)
		i++;
	ASSERT_INT_EQ((long)i, 1);
	TEST_DONE();
	free(text);
	plan_free(p);
	model_free(m);
}

static void
test_exposition(void)
{
	struct stats st;
	struct metrics_now mn = { 0 };
	char *om, *text, *s;
	size_t len;

	memset(&st, 0, sizeof(st));
	stats_solve(&st, 3);		/* 0.003 s: first bucket */
	stats_solve(&st, 700);		/* 0.7 s: le 1.0 */
	stats_solve(&st, 1e6);		/* 1000 s: only +Inf */
	metrics_count_request("/v1/links/{id}", "PATCH", 200);
	metrics_count_request("/v1/links/{id}", "PATCH", 200);
	metrics_count_request(NULL, "BREW", 404);
	mn.stats = &st;
	mn.model_revision = 4;
	om = metrics_render(&mn, true, &len);
	text = metrics_render(&mn, false, &len);

	TEST_START("names counters as each format does");
	ASSERT_TRUE(has(om, "# TYPE weft_http_requests counter\n"));
	ASSERT_TRUE(has(text, "# TYPE weft_http_requests_total counter\n"));
	ASSERT_TRUE(has(om, "weft_http_requests_total{route=\"/v1/links/{id}\","
	    "method=\"PATCH\",code=\"200\"} 2\n"));
	ASSERT_TRUE(has(om, "weft_http_requests_total{route=\"unmatched\","
	    "method=\"other\",code=\"404\"} 1\n"));
	TEST_DONE();

	TEST_START("writes a cumulative histogram with canonical le values");
	ASSERT_TRUE(has(om, "weft_solve_seconds_bucket{le=\"0.005\"} 1\n"));
	ASSERT_TRUE(has(om, "weft_solve_seconds_bucket{le=\"0.5\"} 1\n"));
	ASSERT_TRUE(has(om, "weft_solve_seconds_bucket{le=\"1.0\"} 2\n"));
	ASSERT_TRUE(has(om, "weft_solve_seconds_bucket{le=\"300.0\"} 2\n"));
	ASSERT_TRUE(has(om, "weft_solve_seconds_bucket{le=\"+Inf\"} 3\n"));
	ASSERT_TRUE(has(om, "weft_solve_seconds_count 3\n"));
	s = strstr(om, "weft_solve_seconds_sum ");
	ASSERT_TRUE(s != NULL);
	if (s != NULL)
		ASSERT_DBL_NEAR(strtod(s + 23, NULL), 1000.703, 1e-9);
	TEST_DONE();

	TEST_START("ends an OpenMetrics exposition with # EOF, only that one");
	ASSERT_INT_EQ((long)strlen(om) >= 6, 1);
	ASSERT_STR_EQ(om + strlen(om) - 6, "# EOF\n");
	ASSERT_TRUE(!has(text, "# EOF"));
	ASSERT_TRUE(!has(text, "# UNIT"));
	ASSERT_TRUE(!has(om, "weft_plan_revision"));	/* no plan yet */
	TEST_DONE();
	free(om);
	free(text);
}

static void
test_negotiation(void)
{
	TEST_START("negotiates the format by q-value and specificity");
	ASSERT_TRUE(!metrics_wants_openmetrics(NULL));
	ASSERT_TRUE(metrics_wants_openmetrics("application/openmetrics-text;"
	    "version=1.0.0,application/openmetrics-text;version=0.0.1;q=0.75,"
	    "text/plain;version=0.0.4;q=0.5,*/*;q=0.1"));
	ASSERT_TRUE(metrics_wants_openmetrics("Application/OpenMetrics-Text"));
	ASSERT_TRUE(!metrics_wants_openmetrics("*/*"));
	ASSERT_TRUE(!metrics_wants_openmetrics("text/plain"));
	ASSERT_TRUE(!metrics_wants_openmetrics("application/openmetrics-text;"
	    "q=0, */*"));
	ASSERT_TRUE(metrics_wants_openmetrics("text/plain; q=0.2, "
	    "application/openmetrics-text; q=0.9"));
	ASSERT_TRUE(!metrics_wants_openmetrics("text/plain;q=0.9, "
	    "application/openmetrics-text;q=0.2"));
	ASSERT_TRUE(!metrics_wants_openmetrics("application/openmetrics-text;"
	    "version=2.0.0"));
	ASSERT_TRUE(metrics_wants_openmetrics("application/*, text/plain;"
	    "q=0.5"));
	TEST_DONE();
}

int
main(void)
{
	test_plan_part();
	test_exposition();
	test_negotiation();
	return tap_finish();
}
