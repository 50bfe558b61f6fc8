/* SPDX-License-Identifier: GPL-3.0-or-later */
/* weft sweep watch ID: a sweep's progress until it ends. */

/*
 * DESIGN
 * The daemon counts the scenarios finished and estimates the time left
 * (eta_s, from the scenarios finished so far); the client only polls GET
 * /v1/sweeps/ID and draws.  On a terminal one line is redrawn in place
 * ("\r", then erase to the end of the line); into a pipe or a file each
 * change of the count is one line, so logs stay readable.  Polling stops
 * when the state leaves "running"; the daemon bounds every scenario's
 * time, so a running sweep ends by itself.
 */

#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include <jansson.h>

#include "sweep.h"
#include "client.h"
#include "fetch.h"
#include "fmt.h"
#include "js.h"
#include "opt.h"
#include "wait.h"
#include "../../daemon/base/xalloc.h"

#define BAR_WIDTH	30

static void
progress(const struct cli *c, const json_t *sw, bool running)
{
	long long done = js_int(sw, "done", 0), total = js_int(sw, "total", 0);
	double frac = total > 0 ? (double)done / (double)total : 1;
	char bar[BAR_WIDTH + 1], b1[FMT_LEN], b2[FMT_LEN];
	int i, fill = (int)floor(frac * BAR_WIDTH);

	fmt_secs(b1, js_num(sw, "elapsed_s"));
	if (!running) {
		printf("%ssweep %lld: %s, %lld/%lld scenarios in %s\n",
		    c->tty ? "\r\033[K" : "", js_int(sw, "id", 0),
		    js_str(sw, "state", "?"), done, total, b1);
		return;
	}
	/* No estimate before the first scenario has finished. */
	if (done > 0)
		fmt_secs(b2, js_num(sw, "eta_s"));
	else
		snprintf(b2, sizeof(b2), "?");
	if (c->tty) {
		for (i = 0; i < BAR_WIDTH; i++)
			bar[i] = i < fill ? '#' : '-';
		bar[BAR_WIDTH] = '\0';
		printf("\r[%s] %lld/%lld %3.0f%%  %s elapsed, %s left\033[K",
		    bar, done, total, 100 * frac, b1, b2);
	} else
		printf("sweep %lld: %lld/%lld scenarios (%.0f%%), %s elapsed, "
		    "about %s left\n", js_int(sw, "id", 0), done, total,
		    100 * frac, b1, b2);
	fflush(stdout);
}

int
sweep_watch(const struct cli *c, long long id, double interval_s)
{
	struct answer a = { 0 };
	char *path = xasprintf("/v1/sweeps/%lld", id);
	long long last = -1;
	bool running;
	int r;

	for (;;) {
		if ((r = fetch_get(c, path, &a)) != RC_OK)
			goto out;
		running = strcmp(js_str(a.json, "state", ""), "running") == 0;
		if (!c->json && (!running || c->tty ||
		    js_int(a.json, "done", 0) != last))
			progress(c, a.json, running);
		last = js_int(a.json, "done", 0);
		if (!running)
			break;
		answer_clear(&a);
		wait_sleep(interval_s);
	}
	if (c->json)
		answer_print(&a);
	else
		sweep_summary(a.json, stdout);
	r = sweep_rc(a.json);
out:
	free(path);
	answer_clear(&a);
	return r;
}

/* --interval, the only option of sweep watch. */
static int
interval_opt(int k, const char *val, void *arg)
{
	(void)k;
	return opt_num("--interval", val, 0.05, 3600, arg);
}

int
cmd_sweep_watch(const struct cli *c, int argc, char **argv)
{
	static const struct opt_def defs[] = {
		{ "interval", true },
		{ NULL, false },
	};
	double interval = SWEEP_INTERVAL_S;
	long long id;
	int r;

	if ((r = sweep_id("watch", argc, argv, defs, interval_opt, &interval,
	    &id)) != 0)
		return r;
	return sweep_watch(c, id, interval);
}
