/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Unit tests of the model codec's SRLGs: decoding, printing, refusals. */

/*
 * An SRLG is a 32-bit unsigned number (RFC 4202 section 2.3; RFC 5307
 * section 1.3 carries each in 4 octets), so the range checked below is
 * 0 .. 2^32 - 1 = 4294967295, and the value one past it, 4294967296, must
 * be refused.  A JSON number with a fraction or exponent (RFC 8259 section
 * 6) is not an integer here.  The limit of 64 per link and the error paths
 * are those of docs/api.md.  Expected outputs are written out by hand.
 */

#include <stdint.h>
#include <stdlib.h>
#include <string.h>

#include "../../tap.h"
#include "../../../api/codec_model.h"
#include "../../../daemon/base/err.h"
#include "../../../daemon/base/xalloc.h"
#include "../../../daemon/engine/model.h"
#include "../../../storage/db.h"

/* Two nodes and link L1 between them, with srlgs (a JSON text) if any. */
static char *
topo_text(const char *srlgs)
{
	return xasprintf("{\"nodes\":[{\"id\":\"A\"},{\"id\":\"B\"}],"
	    "\"links\":[{\"id\":\"L0\",\"a\":\"B\",\"b\":\"A\","
	    "\"capacity_bps\":1e9,\"te_metric\":1},{\"id\":\"L1\",\"a\":\"A\","
	    "\"b\":\"B\",\"capacity_bps\":1e10,\"te_metric\":10%s%s}]}",
	    srlgs != NULL ? ",\"srlgs\":" : "", srlgs != NULL ? srlgs : "");
}

/* Decodes a topology whose L1 has srlgs; returns the code, detail in e. */
static int
topo(const char *srlgs, struct model **mp, struct err *e)
{
	char *s = topo_text(srlgs);
	int r;

	err_clear(e);
	*mp = NULL;
	r = codec_topology_decode(s, strlen(s), mp, e);
	free(s);
	if ((r == 0) != (*mp != NULL))
		return 99;	/* a result must come back exactly on success */
	return r;
}

/* A JSON array of n SRLGs 100, 101, ... */
static char *
srlg_list(size_t n)
{
	char *s = xstrdup("["), *t;
	size_t i;

	for (i = 0; i < n; i++) {
		t = xasprintf("%s%s%zu", s, i > 0 ? "," : "", 100 + i);
		free(s);
		s = t;
	}
	t = xasprintf("%s]", s);
	free(s);
	return t;
}

static void
test_decode(void)
{
	struct model *m = NULL;
	struct err e;
	char *list;

	TEST_START("decodes a link's SRLGs and keeps them ascending");
	ASSERT_INT_EQ(topo("[7,4294967295,0,2]", &m, &e), 0);
	if (m != NULL && m->n_links == 2) {
		ASSERT_INT_EQ(m->links[0].n_srlgs, 0);
		ASSERT_INT_EQ(m->links[1].n_srlgs, 4);
		if (m->links[1].n_srlgs == 4) {
			ASSERT_INT_EQ(m->links[1].srlgs[0], 0);
			ASSERT_INT_EQ(m->links[1].srlgs[1], 2);
			ASSERT_INT_EQ(m->links[1].srlgs[2], 7);
			ASSERT_INT_EQ(m->links[1].srlgs[3], 4294967295LL);
		}
		ASSERT_TRUE(link_in_srlg(&m->links[1], 4294967295U));
		ASSERT_TRUE(!link_in_srlg(&m->links[1], 3));
		ASSERT_TRUE(!link_in_srlg(&m->links[0], 0));
	}
	model_free(m);
	TEST_DONE();

	TEST_START("an empty SRLG list is a link in no SRLG");
	ASSERT_INT_EQ(topo("[]", &m, &e), 0);
	if (m != NULL && m->n_links == 2)
		ASSERT_INT_EQ(m->links[1].n_srlgs, 0);
	model_free(m);
	TEST_DONE();

	TEST_START("accepts MODEL_SRLG_MAX (64) SRLGs on a link");
	list = srlg_list(MODEL_SRLG_MAX);
	ASSERT_INT_EQ(topo(list, &m, &e), 0);
	if (m != NULL && m->n_links == 2) {
		ASSERT_INT_EQ(m->links[1].n_srlgs, 64);
		ASSERT_INT_EQ(m->links[1].srlgs[63], 163);
	}
	model_free(m);
	free(list);
	TEST_DONE();
}

static void
test_refusals(void)
{
	static const struct {
		const char *name, *srlgs, *where;
	} bad[] = {
		{ "rejects SRLGs that are not an array", "7",
		    "links[1].srlgs" },
		{ "rejects null SRLGs", "null", "links[1].srlgs" },
		{ "rejects SRLGs given as an object", "{\"g\":1}",
		    "links[1].srlgs" },
		{ "rejects a fractional SRLG", "[1,1.5]", "links[1].srlgs[1]" },
		{ "rejects an SRLG written as a real", "[2.0]",
		    "links[1].srlgs[0]" },
		{ "rejects an SRLG given as a string", "[\"12\"]",
		    "links[1].srlgs[0]" },
		{ "rejects a negative SRLG", "[3,-1]", "links[1].srlgs[1]" },
		{ "rejects SRLG 2^32", "[4294967296]", "links[1].srlgs[0]" },
		{ "rejects an SRLG listed twice", "[5,9,5]",
		    "links[1].srlgs[2]" },
	};
	struct model *m = NULL;
	struct err e;
	char *list;
	size_t i;

	for (i = 0; i < sizeof(bad) / sizeof(bad[0]); i++) {
		TEST_START(bad[i].name);
		ASSERT_INT_EQ(topo(bad[i].srlgs, &m, &e), ERR_INVALID);
		ASSERT_INT_EQ(e.code, ERR_INVALID);
		ASSERT_STR_EQ(e.where, bad[i].where);
		ASSERT_TRUE(e.msg[0] != '\0');
		model_free(m);
		TEST_DONE();
	}

	TEST_START("rejects 65 SRLGs on a link with 400 at links[i].srlgs");
	list = srlg_list(MODEL_SRLG_MAX + 1);
	ASSERT_INT_EQ(topo(list, &m, &e), ERR_INVALID);
	ASSERT_STR_EQ(e.where, "links[1].srlgs");
	ASSERT_TRUE(strstr(e.msg, "64") != NULL);
	model_free(m);
	free(list);
	TEST_DONE();
}

static void
test_encode(void)
{
	struct model *m = NULL, *m2 = NULL;
	struct err e;
	char *s;
	size_t len = 0;

	TEST_START("prints SRLGs ascending, and [] for a link in none");
	ASSERT_INT_EQ(topo("[4294967295,12,3]", &m, &e), 0);
	s = m != NULL ? codec_link_encode(m, 1, &len) : NULL;
	ASSERT_STR_EQ(s, "{\"id\":\"L1\",\"a\":\"A\",\"b\":\"B\","
	    "\"capacity_bps\":10000000000.0,\"te_metric\":10.0,"
	    "\"state\":\"up\",\"srlgs\":[3,12,4294967295]}");
	free(s);
	s = m != NULL ? codec_link_encode(m, 0, &len) : NULL;
	ASSERT_STR_EQ(s, "{\"id\":\"L0\",\"a\":\"B\",\"b\":\"A\","
	    "\"capacity_bps\":1000000000.0,\"te_metric\":1.0,"
	    "\"state\":\"up\",\"srlgs\":[]}");
	free(s);
	TEST_DONE();

	TEST_START("a printed topology decodes to the same SRLGs");
	s = m != NULL ? codec_topology_encode(m, &len) : NULL;
	ASSERT_TRUE(s != NULL && strstr(s, "\"srlgs\":[3,12,4294967295]") !=
	    NULL && strstr(s, "\"srlgs\":[]") != NULL);
	if (s != NULL) {
		ASSERT_INT_EQ(len, strlen(s));
		err_clear(&e);
		ASSERT_INT_EQ(codec_topology_decode(s, len, &m2, &e), 0);
	}
	if (m2 != NULL && m2->n_links == 2) {
		ASSERT_INT_EQ(m2->links[0].n_srlgs, 0);
		ASSERT_INT_EQ(m2->links[1].n_srlgs, 3);
		if (m2->links[1].n_srlgs == 3) {
			ASSERT_INT_EQ(m2->links[1].srlgs[0], 3);
			ASSERT_INT_EQ(m2->links[1].srlgs[1], 12);
			ASSERT_INT_EQ(m2->links[1].srlgs[2], 4294967295LL);
		}
	} else
		ASSERT_TRUE(m2 != NULL && m2->n_links == 2);
	free(s);
	model_free(m);
	model_free(m2);
	TEST_DONE();
}

static void
test_patch(void)
{
	static const struct {
		const char *name, *text, *where;
	} bad[] = {
		{ "rejects a patch with SRLGs that are not an array",
		    "{\"srlgs\":1}", "srlgs" },
		{ "rejects a patch with null SRLGs", "{\"srlgs\":null}",
		    "srlgs" },
		{ "rejects a patch with a negative SRLG", "{\"srlgs\":[-1]}",
		    "srlgs[0]" },
		{ "rejects a patch with SRLG 2^32",
		    "{\"state\":\"up\",\"srlgs\":[1,4294967296]}", "srlgs[1]" },
		{ "rejects a patch with an SRLG listed twice",
		    "{\"srlgs\":[8,8]}", "srlgs[1]" },
	};
	struct link_patch lp;
	struct err e;
	const char *s;
	char *t, *list;
	size_t i;

	TEST_START("decodes a patch that only sets SRLGs");
	s = "{\"srlgs\":[2,1]}";
	err_clear(&e);
	ASSERT_INT_EQ(codec_link_patch_decode(s, strlen(s), &lp, &e), 0);
	ASSERT_TRUE(lp.has_srlgs && !lp.has_up && !lp.has_capacity &&
	    !lp.has_metric);
	ASSERT_INT_EQ(lp.n_srlgs, 2);
	ASSERT_INT_EQ(lp.srlgs[0], 2);
	ASSERT_INT_EQ(lp.srlgs[1], 1);
	TEST_DONE();

	TEST_START("an empty SRLG list is a patch (out of every SRLG)");
	s = "{\"srlgs\":[]}";
	ASSERT_INT_EQ(codec_link_patch_decode(s, strlen(s), &lp, &e), 0);
	ASSERT_TRUE(lp.has_srlgs);
	ASSERT_INT_EQ(lp.n_srlgs, 0);
	TEST_DONE();

	TEST_START("a patch without srlgs leaves has_srlgs false");
	s = "{\"te_metric\":3}";
	ASSERT_INT_EQ(codec_link_patch_decode(s, strlen(s), &lp, &e), 0);
	ASSERT_TRUE(!lp.has_srlgs && lp.has_metric);
	TEST_DONE();

	for (i = 0; i < sizeof(bad) / sizeof(bad[0]); i++) {
		TEST_START(bad[i].name);
		err_clear(&e);
		ASSERT_INT_EQ(codec_link_patch_decode(bad[i].text,
		    strlen(bad[i].text), &lp, &e), ERR_INVALID);
		ASSERT_STR_EQ(e.where, bad[i].where);
		TEST_DONE();
	}

	TEST_START("rejects a patch with 65 SRLGs at srlgs");
	list = srlg_list(MODEL_SRLG_MAX + 1);
	t = xasprintf("{\"srlgs\":%s}", list);
	err_clear(&e);
	ASSERT_INT_EQ(codec_link_patch_decode(t, strlen(t), &lp, &e),
	    ERR_INVALID);
	ASSERT_STR_EQ(e.where, "srlgs");
	free(t);
	free(list);
	TEST_DONE();
}

int
main(void)
{
	test_decode();
	test_refusals();
	test_encode();
	test_patch();
	return tap_finish();
}
