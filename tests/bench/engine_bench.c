/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Times full and incremental solves of an SNDlib network; JSON lines out. */

/*
 * DESIGN
 * usage: engine_bench FILE [--objective cost|balance]
 *            [--formulation path|arc|potential] [--gap F] [--fail-links N] [--seed S]
 *            [--links ID,ID...] [--from-seed]
 *            [--scale-demands F] [--keep-paths] [--prescale F] [--debug]
 *
 * Solves FILE once from nothing ("full"), then, keeping the engine state,
 * takes N links down one at a time (chosen by the seed), each followed by
 * its restore ("link_down", "restore"), then the links --links names (in
 * the file's order), the same way, then multiplies every demand by F
 * ("scale_demands").  --prescale multiplies the demands before the
 * first solve (an over-subscribed instance).  --from-seed solves each
 * link failure from a state rebuilt from the seed of the first solve, as
 * what-ifs and sweeps do (no restore), and prints the rebuild time.  Every solve prints one JSON object on its own line
 * with the wall time and the plan's figures, so a driver can compute
 * ratios, then a line "  stages: [...]" (not JSON: drivers skip lines
 * that do not start with "{").  --debug sends the engine's debug log to
 * standard error.  The node-arc formulation keeps no state: its "warm" solves
 * are full solves, timed the same way for comparison.
 */

#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>

#include "../../daemon/base/err.h"
#include "../../daemon/base/log.h"
#include "../../daemon/base/xalloc.h"
#include "../../daemon/engine/engine.h"
#include "../../daemon/engine/sndlib.h"

static double
now_ms(void)
{
	struct timespec ts;

	clock_gettime(CLOCK_MONOTONIC, &ts);
	return (double)ts.tv_sec * 1e3 + (double)ts.tv_nsec / 1e6;
}

static char *
slurp(const char *path, size_t *lenp)
{
	FILE *f = fopen(path, "rb");
	char *buf;
	long n;

	if (f == NULL)
		return NULL;
	fseek(f, 0, SEEK_END);
	n = ftell(f);
	fseek(f, 0, SEEK_SET);
	buf = xmalloc((size_t)n + 1);
	if (fread(buf, 1, (size_t)n, f) != (size_t)n) {
		fclose(f);
		free(buf);
		return NULL;
	}
	fclose(f);
	*lenp = (size_t)n;
	return buf;
}

static unsigned long
rnd(unsigned long *s)
{
	*s = *s * 6364136223846793005UL + 1442695040888963407UL;
	return *s >> 33;
}

/* Solves and prints one line; returns 0 or the engine's error. */
static int
run(struct engine_state **st, const struct model *m, const char *file,
    const char *event, const char *link)
{
	struct plan *p = NULL;
	struct err e;
	double t0, ms;
	size_t i;
	int r;

	err_clear(&e);
	t0 = now_ms();
	r = engine_solve_warm(st, m, NULL, &p, &e);
	ms = now_ms() - t0;
	if (r != 0) {
		printf("{\"instance\": \"%s\", \"event\": \"%s\", "
		    "\"error\": \"%s\"}\n", file, event, e.msg);
		return r;
	}
	printf("{\"instance\": \"%s\", \"formulation\": \"%s\", "
	    "\"objective\": \"%s\", \"event\": \"%s\", \"link\": \"%s\", "
	    "\"ms\": %.3f, \"status\": \"%s\", \"max_util\": %.12g, "
	    "\"total_cost\": %.12g, \"carried_bps\": %.12g, "
	    "\"lp_objective\": %.12g, \"iterations\": %d, "
	    "\"cg_rounds\": %d, \"columns\": %zu, \"gap\": %.3g, "
	    "\"warm\": %s, \"moved_bps\": %.12g}\n", file,
	    formulation_word(p->formulation),
	    m->policy.objective == OBJ_BALANCE ? "balance" : "cost", event,
	    link, ms, plan_status_str(p->status), p->max_util, p->total_cost,
	    p->carried_bps, p->n_stages > 0 ?
	    p->stages[p->n_stages - 1].lp_objective : 0, p->iterations,
	    p->cg_rounds, p->columns, p->gap, p->warm ? "true" : "false",
	    p->moved_bps);
	for (i = 0; i < p->n_stages; i++)
		printf("%s{\"stage\": \"%s\", \"ms\": %.3f, "
		    "\"iterations\": %d}%s", i == 0 ? "  stages: [" : ", ",
		    p->stages[i].name, p->stages[i].ms,
		    p->stages[i].iterations, i + 1 == p->n_stages ? "]\n" : "");
	fflush(stdout);
	plan_free(p);
	return 0;
}

/* With --from-seed: scenarios start from this seed, as sweeps do. */
static struct engine_seed *from_seed;

/* Link l down, solve, back up, solve. */
static int
fail_restore(struct engine_state **st, struct model *m, const char *file,
    size_t l)
{
	struct engine_state *sst;
	double t0;
	int r;

	m->links[l].up = false;
	if (from_seed != NULL) {
		t0 = now_ms();
		sst = engine_state_from_seed(from_seed);
		printf("  rebuild from seed: %.3f ms\n", now_ms() - t0);
		r = run(&sst, m, file, "link_down", m->links[l].id);
		engine_state_free(sst);
		m->links[l].up = true;
		return r;
	}
	if (run(st, m, file, "link_down", m->links[l].id) != 0)
		return 1;
	m->links[l].up = true;
	return run(st, m, file, "restore", m->links[l].id);
}

int
main(int argc, char **argv)
{
	struct engine_state *st = NULL;
	struct model *m = NULL;
	struct err e;
	const char *file = NULL, *names = NULL;
	char *text;
	size_t len, i, n_fail = 0, l, *picked;
	unsigned long seed = 1;
	double scale = 0, prescale = 0;
	bool balance = false, keep = false, seeded = false;
	enum formulation form = FORM_PATH;
	double gap_target = -1;
	int a, r = 1;

	for (a = 1; a < argc; a++) {
		if (strcmp(argv[a], "--objective") == 0 && a + 1 < argc)
			balance = strcmp(argv[++a], "balance") == 0;
		else if (strcmp(argv[a], "--formulation") == 0 && a + 1 < argc)
		{
			if (formulation_parse(argv[++a], &form) != 0) {
				fprintf(stderr, "engine_bench: unknown "
				    "formulation %s\n", argv[a]);
				return 2;
			}
		} else if (strcmp(argv[a], "--gap") == 0 && a + 1 < argc)
			gap_target = strtod(argv[++a], NULL);
		else if (strcmp(argv[a], "--fail-links") == 0 && a + 1 < argc)
			n_fail = strtoul(argv[++a], NULL, 10);
		else if (strcmp(argv[a], "--links") == 0 && a + 1 < argc)
			names = argv[++a];
		else if (strcmp(argv[a], "--seed") == 0 && a + 1 < argc)
			seed = strtoul(argv[++a], NULL, 10);
		else if (strcmp(argv[a], "--scale-demands") == 0 &&
		    a + 1 < argc)
			scale = strtod(argv[++a], NULL);
		else if (strcmp(argv[a], "--prescale") == 0 && a + 1 < argc)
			prescale = strtod(argv[++a], NULL);
		else if (strcmp(argv[a], "--keep-paths") == 0)
			keep = true;
		else if (strcmp(argv[a], "--from-seed") == 0)
			seeded = true;
		else if (strcmp(argv[a], "--debug") == 0)
			log_set_level(LOG_LVL_DEBUG);
		else if (argv[a][0] != '-' && file == NULL)
			file = argv[a];
		else {
			fprintf(stderr, "usage: engine_bench FILE [--objective "
			    "cost|balance] [--formulation path|arc|potential] [--gap F] "
			    "[--fail-links N] [--links ID,ID..] [--seed S] "
			    "[--scale-demands F] "
			    "[--keep-paths] [--prescale F] [--from-seed] "
			    "[--debug]\n");
			return 2;
		}
	}
	if (file == NULL || (text = slurp(file, &len)) == NULL) {
		fprintf(stderr, "engine_bench: cannot read %s\n",
		    file ? file : "(no file)");
		return 2;
	}
	err_clear(&e);
	if (sndlib_parse(text, len, &m, &e) != 0) {
		fprintf(stderr, "engine_bench: %s: %s: %s\n", file, e.where,
		    e.msg);
		free(text);
		return 2;
	}
	free(text);
	m->policy.objective = balance ? OBJ_BALANCE : OBJ_COST;
	m->policy.formulation = form;
	if (gap_target >= 0)
		m->policy.gap_target = gap_target;
	m->policy.keep_paths = keep;
	if (prescale > 0)
		for (i = 0; i < m->n_demands; i++)
			m->demands[i].rate_bps *= prescale;
	if (run(&st, m, file, "full", "") != 0)
		goto out;
	if (seeded) {
		double t0 = now_ms();

		from_seed = engine_seed_take(st);
		printf("  seed taken: %.3f ms\n", now_ms() - t0);
	}
	if (n_fail > m->n_links)
		n_fail = m->n_links;
	picked = xcalloc(m->n_links + 1, sizeof(*picked));
	for (i = 0; i < m->n_links; i++)
		picked[i] = i;
	for (i = 0; i < n_fail; i++) {
		/* A partial Fisher-Yates shuffle picks distinct links. */
		l = i + rnd(&seed) % (m->n_links - i);
		len = picked[i];
		picked[i] = picked[l];
		picked[l] = len;
		if (fail_restore(&st, m, file, picked[i]) != 0)
			break;
	}
	free(picked);
	/* Named links, one at a time, each restored after. */
	for (l = 0; names != NULL && l < m->n_links; l++) {
		const char *q = names;
		size_t n = strlen(m->links[l].id);

		while ((q = strstr(q, m->links[l].id)) != NULL &&
		    !((q == names || q[-1] == ',') &&
		    (q[n] == ',' || q[n] == '\0')))
			q++;
		if (q != NULL && fail_restore(&st, m, file, l) != 0)
			break;
	}
	if (scale > 0) {
		for (i = 0; i < m->n_demands; i++)
			m->demands[i].rate_bps *= scale;
		if (run(&st, m, file, "scale_demands", "") != 0)
			goto out;
	}
	r = 0;
out:
	engine_seed_free(from_seed);
	engine_state_free(st);
	model_free(m);
	engine_thread_done();
	return r;
}
