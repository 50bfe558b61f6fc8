/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Waiting until the daemon has planned a model revision (--wait). */
#include <errno.h>
#include <stdarg.h>
#include <stdio.h>
#include <time.h>

#include <jansson.h>

#include "wait.h"
#include "client.h"
#include "fetch.h"
#include "js.h"
#include "show.h"
#include "../../daemon/base/clock.h"

void
wait_sleep(double s)
{
	struct timespec ts;

	ts.tv_sec = (time_t)s;
	ts.tv_nsec = (long)((s - (double)ts.tv_sec) * 1e9);
	while (nanosleep(&ts, &ts) != 0 && errno == EINTR)
		;
}

int
wait_plan(const struct cli *c, long long rev, json_t **planp)
{
	struct answer a = { 0 };
	json_t *solver;
	double end = clock_ms() + c->timeout_s * 1e3;
	int r;

	*planp = NULL;
	for (;;) {
		if ((r = fetch_get(c, "/v1/health", &a)) != RC_OK)
			goto out;
		solver = js_obj(a.json, "solver");
		if (js_int(a.json, "plan_model_revision", 0) >= rev &&
		    js_int(a.json, "plan_revision", 0) > 0)
			break;
		if (js_bool(solver, "last_solve_failed") &&
		    js_int(solver, "failed_model_revision", 0) >= rev) {
			msg("the solve of model revision %lld failed: %s",
			    js_int(solver, "failed_model_revision", 0),
			    js_str(solver, "last_error", "?"));
			r = RC_FAILED;
			goto out;
		}
		if (clock_ms() >= end) {
			msg("no plan for model revision %lld within %g s", rev,
			    c->timeout_s);
			r = RC_FAILED;
			goto out;
		}
		answer_clear(&a);
		wait_sleep(WAIT_POLL_MS / 1000.0);
	}
	answer_clear(&a);
	if ((r = fetch_get(c, "/v1/plan", &a)) != RC_OK)
		goto out;
	*planp = json_incref(a.json);
	r = RC_OK;
out:
	answer_clear(&a);
	return r;
}

int
wait_report(const struct cli *c, long long rev)
{
	json_t *plan;
	int r;

	if ((r = wait_plan(c, rev, &plan)) != RC_OK)
		return r;
	if (!c->json)
		show_plan_line(plan, stdout);
	r = show_plan_rc(plan);
	json_decref(plan);
	return r;
}

int
wait_changed(const struct cli *c, const struct answer *a, bool wait,
    const char *fmt, ...)
{
	long long rev = js_int(a->json, "model_revision", 0);
	va_list ap;

	if (c->json)
		answer_print(a);
	else {
		va_start(ap, fmt);
		vprintf(fmt, ap);
		va_end(ap);
		printf(" (model revision %lld)\n", rev);
	}
	return wait ? wait_report(c, rev) : RC_OK;
}
