/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Waiting until the daemon has planned a model revision (--wait). */
#ifndef WEFT_CLIENT_WAIT_H
#define WEFT_CLIENT_WAIT_H

#include <stdbool.h>

#include <jansson.h>

struct answer;
struct cli;

/*
 * Polls GET /v1/health every WAIT_POLL_MS until the published plan
 * reflects model revision rev or a newer one, at most c->timeout_s in
 * all, then fetches GET /v1/plan into *planp (the caller decrefs it).
 * Returns RC_OK; RC_FAILED when the solve of rev failed (the daemon's
 * reason is printed), the time ran out or a request failed.
 */
int wait_plan(const struct cli *c, long long rev, json_t **planp);

/*
 * For the write commands' --wait: waits as above, prints the plan's line
 * (show_plan_line) unless c->json, and returns the plan's exit code
 * (show_plan_rc); on failure wait_plan()'s code.
 */
int wait_report(const struct cli *c, long long rev);

/*
 * Ends a write command whose answer a (2xx) carries the new
 * "model_revision": prints a's body with c->json, else the line fmt, ...
 * followed by " (model revision N)"; then, with wait, waits for the plan
 * as wait_report() does.  Returns RC_OK, or wait_report()'s code.
 */
int wait_changed(const struct cli *c, const struct answer *a, bool wait,
    const char *fmt, ...) __attribute__((format(printf, 4, 5)));

#define WAIT_POLL_MS	100

/* Sleeps s seconds (fractions allowed). */
void wait_sleep(double s);

#endif /* WEFT_CLIENT_WAIT_H */
