/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Scenarios (daemon/engine/scenario.c) on a hand-made network: which links
   go down, which rates change, what is refused; cut-off demands. */

#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "../../tap.h"
#include "enginetest.h"
#include "../../../daemon/engine/scenario.h"
#include "../../../daemon/base/err.h"
#include "../../../daemon/base/xalloc.h"

/*
 * A-B-C triangle plus a spur C-D (the only way to D).  SRLG 7 holds ab
 * and cd, SRLG 9 only bc.  Demands: A->B 1G, A->D 2G, B->C 3G.
 */
static struct model *
net(void)
{
	struct model *m = model_new();
	uint32_t g7 = 7, g9 = 9;

	node(m, "A");
	node(m, "B");
	node(m, "C");
	node(m, "D");
	add_link(m, "ab", "A", "B", 1e10, 1, true);
	add_link(m, "bc", "B", "C", 1e10, 1, true);
	add_link(m, "ca", "C", "A", 1e10, 1, true);
	add_link(m, "cd", "C", "D", 1e10, 1, true);
	if (model_set_link_srlgs(m, 0, &g7, 1, "links[0]", NULL) != 0 ||
	    model_set_link_srlgs(m, 3, &g7, 1, "links[3]", NULL) != 0 ||
	    model_set_link_srlgs(m, 1, &g9, 1, "links[1]", NULL) != 0)
		abort();
	demand(m, "A", "B", 1e9, 0);
	demand(m, "A", "D", 2e9, 0);
	demand(m, "B", "C", 3e9, 1);
	return m;
}

static char **
strs(const char *a, const char *b)
{
	char **v = xcalloc(3, sizeof(*v));

	v[0] = xstrdup(a);
	if (b != NULL)
		v[1] = xstrdup(b);
	return v;
}

/* Applies sc to live; returns the failed links as "ab,cd" in buf. */
static int
apply(const struct model *live, struct scenario *sc, struct model **mp,
    char *buf, size_t n, struct err *e)
{
	size_t *failed = NULL, nf = 0, i;
	int r;

	err_clear(e);
	buf[0] = '\0';
	r = scenario_apply(live, sc, mp, &failed, &nf, e);
	for (i = 0; r == 0 && i < nf; i++) {
		strncat(buf, i > 0 ? "," : "", n - strlen(buf) - 1);
		strncat(buf, (*mp)->links[failed[i]].id, n - strlen(buf) - 1);
	}
	free(failed);
	return r;
}

static void
test_failures(void)
{
	struct model *live = net(), *m = NULL;
	struct scenario *sc;
	struct err e;
	char buf[128];
	uint32_t g7 = 7;
	double cut;

	TEST_START("fail links, nodes and SRLGs on a copy");
	sc = scenario_new();
	sc->fail_links = strs("bc", NULL);
	sc->n_fail_links = 1;
	ASSERT_INT_EQ(apply(live, sc, &m, buf, sizeof(buf), &e), 0);
	ASSERT_STR_EQ(buf, "bc");
	ASSERT_TRUE(live->links[1].up);	/* the live model is untouched */
	/* Nothing is cut off: B-A-C still joins B and C. */
	ASSERT_INT_EQ(model_cut_off(m, NULL, NULL), 0);
	model_free(m);
	scenario_free(sc);

	/* Node C takes bc, ca and cd: A->D and B->C are cut off (5G). */
	sc = scenario_new();
	sc->fail_nodes = strs("C", NULL);
	sc->n_fail_nodes = 1;
	ASSERT_INT_EQ(apply(live, sc, &m, buf, sizeof(buf), &e), 0);
	ASSERT_STR_EQ(buf, "bc,ca,cd");
	ASSERT_INT_EQ(model_cut_off(m, NULL, &cut), 2);
	ASSERT_DBL_NEAR(cut, 5e9, 1e-12);
	model_free(m);
	scenario_free(sc);

	/* SRLG 7: ab and cd; A->D is cut off, A->B goes round by C. */
	sc = scenario_new();
	sc->fail_srlgs = xcalloc(1, sizeof(*sc->fail_srlgs));
	sc->fail_srlgs[0] = g7;
	sc->n_fail_srlgs = 1;
	ASSERT_INT_EQ(apply(live, sc, &m, buf, sizeof(buf), &e), 0);
	ASSERT_STR_EQ(buf, "ab,cd");
	{
		bool cutk[3];

		ASSERT_INT_EQ(model_cut_off(m, cutk, NULL), 1);
		ASSERT_TRUE(!cutk[0] && cutk[1] && !cutk[2]);
	}
	model_free(m);
	scenario_free(sc);

	/* A link already down in live is not reported as failed again. */
	live->links[2].up = false;
	sc = scenario_new();
	sc->fail_links = strs("ca", "ab");
	sc->n_fail_links = 2;
	ASSERT_INT_EQ(apply(live, sc, &m, buf, sizeof(buf), &e), 0);
	ASSERT_STR_EQ(buf, "ab");
	model_free(m);
	scenario_free(sc);
	model_free(live);
	TEST_DONE();
}

static void
test_changes(void)
{
	struct model *live = net(), *m = NULL;
	struct scenario *sc;
	struct err e;
	char buf[128];

	TEST_START("scale, per-site factors, link edits, new links");
	sc = scenario_new();
	sc->scale = 2;
	sc->scales = xcalloc(1, sizeof(*sc->scales));
	sc->n_scales = 1;
	sc->scales[0].from = strs("A", NULL);
	sc->scales[0].n_from = 1;
	sc->scales[0].all_to = true;
	sc->scales[0].factor = 1.5;
	sc->links = xcalloc(1, sizeof(*sc->links));
	sc->n_links = 1;
	sc->links[0].id = xstrdup("bc");
	sc->links[0].has_capacity = true;
	sc->links[0].capacity_bps = 4e10;
	sc->add = xcalloc(1, sizeof(*sc->add));
	sc->n_add = 1;
	sc->add[0].id = xstrdup("ad");
	sc->add[0].a = xstrdup("A");
	sc->add[0].b = xstrdup("D");
	sc->add[0].capacity_bps = 1e11;
	sc->add[0].te_metric = 3;
	sc->add[0].srlgs = xcalloc(1, sizeof(uint32_t));
	sc->add[0].srlgs[0] = 11;
	sc->add[0].n_srlgs = 1;
	/* A failure of the new link's SRLG is known. */
	sc->fail_srlgs = xcalloc(1, sizeof(*sc->fail_srlgs));
	sc->fail_srlgs[0] = 11;
	sc->n_fail_srlgs = 1;
	ASSERT_INT_EQ(apply(live, sc, &m, buf, sizeof(buf), &e), 0);
	if (m != NULL) {
		/* x2 all, then x1.5 from A: 3G, 6G, 6G. */
		ASSERT_DBL_NEAR(m->demands[0].rate_bps, 3e9, 1e-12);
		ASSERT_DBL_NEAR(m->demands[1].rate_bps, 6e9, 1e-12);
		ASSERT_DBL_NEAR(m->demands[2].rate_bps, 6e9, 1e-12);
		ASSERT_DBL_NEAR(m->links[1].capacity_bps, 4e10, 1e-12);
		ASSERT_INT_EQ(m->n_links, 5);
		ASSERT_STR_EQ(buf, "ad");
	}
	ASSERT_DBL_NEAR(live->demands[0].rate_bps, 1e9, 0);
	ASSERT_INT_EQ(live->n_links, 4);
	model_free(m);
	scenario_free(sc);
	model_free(live);
	TEST_DONE();
}

/* Each bad scenario is refused whole, naming the member. */
static void
test_refusals(void)
{
	struct model *live = net(), *m = NULL;
	struct scenario *sc;
	struct err e;
	char buf[128];

	TEST_START("bad scenarios are refused, naming the member");
	sc = scenario_new();
	sc->fail_links = strs("ab", "zz");
	sc->n_fail_links = 2;
	ASSERT_INT_EQ(apply(live, sc, &m, buf, sizeof(buf), &e), ERR_INVALID);
	ASSERT_STR_EQ(e.where, "fail.links[1]");
	ASSERT_TRUE(m == NULL);
	scenario_free(sc);

	sc = scenario_new();
	sc->fail_srlgs = xcalloc(1, sizeof(*sc->fail_srlgs));
	sc->fail_srlgs[0] = 8;
	sc->n_fail_srlgs = 1;
	ASSERT_INT_EQ(apply(live, sc, &m, buf, sizeof(buf), &e), ERR_INVALID);
	ASSERT_STR_EQ(e.where, "fail.srlgs[0]");
	scenario_free(sc);

	sc = scenario_new();
	sc->scale = -1;
	ASSERT_INT_EQ(apply(live, sc, &m, buf, sizeof(buf), &e), ERR_INVALID);
	ASSERT_STR_EQ(e.where, "scale");
	sc->scale = NAN;
	ASSERT_INT_EQ(apply(live, sc, &m, buf, sizeof(buf), &e), ERR_INVALID);
	scenario_free(sc);

	sc = scenario_new();
	sc->scales = xcalloc(1, sizeof(*sc->scales));
	sc->n_scales = 1;
	sc->scales[0].all_from = true;
	sc->scales[0].to = strs("Q", NULL);
	sc->scales[0].n_to = 1;
	sc->scales[0].factor = 2;
	ASSERT_INT_EQ(apply(live, sc, &m, buf, sizeof(buf), &e), ERR_INVALID);
	ASSERT_STR_EQ(e.where, "scale_demands[0].to[0]");
	scenario_free(sc);

	sc = scenario_new();
	sc->add = xcalloc(1, sizeof(*sc->add));
	sc->n_add = 1;
	sc->add[0].id = xstrdup("ab");	/* taken */
	sc->add[0].a = xstrdup("A");
	sc->add[0].b = xstrdup("D");
	sc->add[0].capacity_bps = 1e9;
	sc->add[0].te_metric = 1;
	ASSERT_INT_EQ(apply(live, sc, &m, buf, sizeof(buf), &e), ERR_INVALID);
	ASSERT_TRUE(strncmp(e.where, "add_links[0]", 12) == 0);
	ASSERT_TRUE(m == NULL);
	scenario_free(sc);
	model_free(live);
	TEST_DONE();
}

int
main(void)
{
	test_failures();
	test_changes();
	test_refusals();
	return tap_finish();
}
