/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Unit tests of streamed plan lists (api/plan_list.c) and content codings
   (api/compress.c). */

/*
 * Expected values: the streamed lists against the whole texts that
 * codec_plan_render() writes (the unpaged stream must be the same bytes,
 * and pages must add up to them), with filters and pages derived by hand
 * from the small plan below.  Content negotiation against the rules of
 * RFC 9110, 12.5.3 (q-values, "*", identity refused), each case's reason
 * beside it.  Compressed bytes are inflated with zlib's inflate() and the
 * formats' magic bytes are checked against RFC 1952, 2.3.1 (gzip: 1f 8b,
 * CM 8) and RFC 1950, 2.2 (zlib: CM 8, FCHECK making CMF*256+FLG a
 * multiple of 31); tests/integration/plan_pages.py decodes them with
 * Python's gzip and zlib modules, an independent reader.
 */

#include <stdlib.h>
#include <string.h>

#include <zlib.h>

#include "../../tap.h"
#include "../../../api/codec_plan.h"
#include "../../../api/compress.h"
#include "../../../api/http.h"
#include "../../../api/plan_list.h"
#include "../../../api/query.h"
#include "../../../daemon/base/err.h"
#include "../../../daemon/base/xalloc.h"
#include "../../../daemon/engine/model.h"
#include "../../../daemon/engine/plan.h"

/*
 * Nodes A B C D; links L1 A-B, L2 B-C, L3 C-D, L4 A-D (10 Gbit/s).
 * Demands (model order):
 *   0 A->C 4G on A-B-C            (arcs 0, 2: L1, L2)
 *   1 A->D 6G on A-D 4G, A-B-C-D 2G (arc 6: L4; arcs 0, 2, 4)
 *   2 B->D 1G on B-C-D            (arcs 2, 4: L2, L3)
 *   3 C->A 1G on C-B-A            (arcs 3, 1: L2 b->a, L1 b->a)
 *   4 D->B 1G unserved (no path)
 */
static void
path(struct plan_path *pp, double rate, size_t n, const size_t *arcs)
{
	pp->rate_bps = rate;
	pp->n_arcs = n;
	pp->arcs = xcalloc(n, sizeof(size_t));
	memcpy(pp->arcs, arcs, n * sizeof(size_t));
}

static void
build(struct model **mp, struct plan **pp)
{
	static const size_t a0[] = { 0, 2 }, a1a[] = { 6 },
	    a1b[] = { 0, 2, 4 }, a2[] = { 2, 4 }, a3[] = { 3, 1 };
	struct model *m = model_new();
	struct plan *p = xcalloc(1, sizeof(*p));
	struct err e = { 0 };
	size_t i;

	model_add_node(m, "A", NULL, NULL, "n", &e);
	model_add_node(m, "B", NULL, NULL, "n", &e);
	model_add_node(m, "C", NULL, NULL, "n", &e);
	model_add_node(m, "D", NULL, NULL, "n", &e);
	model_add_link(m, "L1", "A", "B", 1e10, 1, true, "l", &e);
	model_add_link(m, "L2", "B", "C", 1e10, 1, true, "l", &e);
	model_add_link(m, "L3", "C", "D", 1e10, 1, true, "l", &e);
	model_add_link(m, "L4", "A", "D", 1e10, 3, true, "l", &e);
	model_add_demand(m, "A", "C", 4e9, 0, "d", &e);
	model_add_demand(m, "A", "D", 6e9, 0, "d", &e);
	model_add_demand(m, "B", "D", 1e9, 1, "d", &e);
	model_add_demand(m, "C", "A", 1e9, 0, "d", &e);
	model_add_demand(m, "D", "B", 1e9, 2, "d", &e);
	m->revision = 3;
	p->model_revision = 3;
	p->max_util = 0.7;
	p->n_routes = 5;
	p->routes = xcalloc(5, sizeof(*p->routes));
	p->routes[0].n_paths = 1;
	p->routes[0].paths = xcalloc(1, sizeof(struct plan_path));
	path(&p->routes[0].paths[0], 4e9, 2, a0);
	p->routes[1].n_paths = 2;
	p->routes[1].paths = xcalloc(2, sizeof(struct plan_path));
	path(&p->routes[1].paths[0], 4e9, 1, a1a);
	path(&p->routes[1].paths[1], 2e9, 3, a1b);
	p->routes[2].n_paths = 1;
	p->routes[2].paths = xcalloc(1, sizeof(struct plan_path));
	path(&p->routes[2].paths[0], 1e9, 2, a2);
	p->routes[3].n_paths = 1;
	p->routes[3].paths = xcalloc(1, sizeof(struct plan_path));
	path(&p->routes[3].paths[0], 1e9, 2, a3);
	p->routes[4].unserved_bps = 1e9;
	for (i = 0; i < 4; i++)
		p->routes[i].carried_bps = m->demands[i].rate_bps;
	p->n_arcs = 8;
	p->arcs = xcalloc(8, sizeof(*p->arcs));
	p->arcs[0].load_bps = 6e9;
	p->arcs[0].util = 0.6;
	p->arcs[6].load_bps = 4e9;
	p->arcs[6].util = 0.4;
	*mp = m;
	*pp = p;
}

/* Reads the whole list l into a new string, max bytes per fill call. */
static char *
drain(struct plan_list *l, size_t max)
{
	char *s = NULL;
	size_t len = 0;
	long n;

	for (;;) {
		s = xreallocarray(s, 1, len + max + 1);
		n = plan_list_fill(l, s + len, max);
		if (n == HTTP_FILL_END)
			break;
		if (n <= 0 || (size_t)n > max) {
			free(s);
			return NULL;
		}
		len += (size_t)n;
	}
	s[len] = '\0';
	plan_list_free(l);
	return s;
}

static char *
list(const struct model *m, const struct plan *p, enum plan_list_kind kind,
    long src, long dst, long link, long node, size_t start, size_t limit,
    size_t max)
{
	struct plan_list_opts o = { .kind = kind, .src = src, .dst = dst,
	    .link = link, .node = node, .start = start, .limit = limit,
	    .paged = limit > 0 || start > 0 };

	return drain(plan_list_new(m, p, 9, &o), max);
}

/* Counts the entries of a routes or links array in s: its "src" or "id"
   keys at the top of each entry. */
static int
count(const char *s, const char *key)
{
	int n = 0;

	while (s != NULL && (s = strstr(s, key)) != NULL) {
		n++;
		s++;
	}
	return n;
}

static void
test_lists(void)
{
	struct model *m;
	struct plan *p;
	char *whole_rt = NULL, *whole_ld = NULL, *sum = NULL, *s;
	size_t slen, rlen, llen, max;
	static const size_t sizes[] = { 1, 2, 3, 7, 64, 4096, 32768 };
	size_t i;

	build(&m, &p);
	codec_plan_render(m, p, 9, &sum, &slen, &whole_rt, &rlen, &whole_ld,
	    &llen);

	TEST_START("streams exactly codec_plan_render's routes and loads");
	ASSERT_TRUE(whole_rt != NULL && whole_ld != NULL);
	for (i = 0; i < sizeof(sizes) / sizeof(sizes[0]); i++) {
		max = sizes[i];
		s = list(m, p, PLAN_LIST_ROUTES, -1, -1, -1, -1, 0, 0, max);
		ASSERT_STR_EQ(s, whole_rt);
		free(s);
		s = list(m, p, PLAN_LIST_LOADS, -1, -1, -1, -1, 0, 0, max);
		ASSERT_STR_EQ(s, whole_ld);
		free(s);
	}
	TEST_DONE();

	TEST_START("pages carry next cursors and end with null");
	s = list(m, p, PLAN_LIST_ROUTES, -1, -1, -1, -1, 0, 2, 100);
	ASSERT_TRUE(s != NULL && strstr(s, "],\"next\":\"9.2\"}") != NULL);
	ASSERT_INT_EQ(count(s, "{\"src\""), 2);
	free(s);
	s = list(m, p, PLAN_LIST_ROUTES, -1, -1, -1, -1, 2, 2, 100);
	ASSERT_TRUE(s != NULL && strstr(s, "\"routes\":[{\"src\":\"B\"") !=
	    NULL && strstr(s, "],\"next\":\"9.4\"}") != NULL);
	free(s);
	s = list(m, p, PLAN_LIST_ROUTES, -1, -1, -1, -1, 4, 2, 100);
	ASSERT_TRUE(s != NULL && strstr(s, "\"routes\":[{\"src\":\"D\"") !=
	    NULL && strstr(s, "],\"next\":null}") != NULL);
	ASSERT_INT_EQ(count(s, "{\"src\""), 1);
	free(s);
	/* Exactly five: the last full page already says null. */
	s = list(m, p, PLAN_LIST_ROUTES, -1, -1, -1, -1, 0, 5, 100);
	ASSERT_TRUE(s != NULL && strstr(s, "],\"next\":null}") != NULL);
	free(s);
	s = list(m, p, PLAN_LIST_ROUTES, -1, -1, -1, -1, 5, 5, 100);
	ASSERT_STR_EQ(s, "{\"revision\":9,\"model_revision\":3,\"routes\":[],"
	    "\"next\":null}");
	free(s);
	s = list(m, p, PLAN_LIST_LOADS, -1, -1, -1, -1, 0, 3, 100);
	ASSERT_TRUE(s != NULL && strstr(s, "],\"max_utilization\":"
	    "0.69999999999999996,\"next\":\"9.3\"}") != NULL);
	free(s);
	TEST_DONE();

	TEST_START("filters routes by source, destination and link");
	/* src A: demands 0 and 1. */
	s = list(m, p, PLAN_LIST_ROUTES, 0, -1, -1, -1, 0, 0, 100);
	ASSERT_INT_EQ(count(s, "{\"src\""), 2);
	ASSERT_TRUE(s != NULL && strstr(s, "{\"src\":\"B\"") == NULL);
	free(s);
	/* dst D: demands 1 and 2; with src A only 1. */
	s = list(m, p, PLAN_LIST_ROUTES, -1, 3, -1, -1, 0, 0, 100);
	ASSERT_INT_EQ(count(s, "{\"src\""), 2);
	free(s);
	s = list(m, p, PLAN_LIST_ROUTES, 0, 3, -1, -1, 0, 0, 100);
	ASSERT_INT_EQ(count(s, "{\"src\""), 1);
	free(s);
	/* L3 (index 2): demand 1's second path and demand 2. */
	s = list(m, p, PLAN_LIST_ROUTES, -1, -1, 2, -1, 0, 0, 100);
	ASSERT_INT_EQ(count(s, "{\"src\""), 2);
	ASSERT_TRUE(s != NULL && strstr(s, "\"routes\":[{\"src\":\"A\","
	    "\"dst\":\"D\"") != NULL);
	free(s);
	/* L1 in either direction: demands 0, 1, 3; pages of 2. */
	s = list(m, p, PLAN_LIST_ROUTES, -1, -1, 0, -1, 0, 2, 100);
	ASSERT_INT_EQ(count(s, "{\"src\""), 2);
	ASSERT_TRUE(s != NULL && strstr(s, "\"next\":\"9.2\"") != NULL);
	free(s);
	s = list(m, p, PLAN_LIST_ROUTES, -1, -1, 0, -1, 2, 2, 100);
	ASSERT_INT_EQ(count(s, "{\"src\""), 1);
	ASSERT_TRUE(s != NULL && strstr(s, "[{\"src\":\"C\"") != NULL &&
	    strstr(s, "\"next\":null") != NULL);
	free(s);
	TEST_DONE();

	TEST_START("filters loads by link and node");
	s = list(m, p, PLAN_LIST_LOADS, -1, -1, 3, -1, 0, 0, 100);
	ASSERT_INT_EQ(count(s, "{\"id\""), 1);
	ASSERT_TRUE(s != NULL && strstr(s, "[{\"id\":\"L4\"") != NULL);
	free(s);
	/* Node A: L1 and L4; B: L1, L2; with link L2 at A: none. */
	s = list(m, p, PLAN_LIST_LOADS, -1, -1, -1, 0, 0, 0, 100);
	ASSERT_INT_EQ(count(s, "{\"id\""), 2);
	free(s);
	s = list(m, p, PLAN_LIST_LOADS, -1, -1, 1, 0, 0, 0, 100);
	ASSERT_INT_EQ(count(s, "{\"id\""), 0);
	free(s);
	TEST_DONE();

	TEST_START("lists nothing for a failed solve");
	s = list(m, NULL, PLAN_LIST_LOADS, -1, -1, -1, -1, 0, 0, 7);
	ASSERT_STR_EQ(s, "{\"revision\":9,\"model_revision\":3,\"links\":[],"
	    "\"max_utilization\":null}");
	free(s);
	TEST_DONE();

	free(sum);
	free(whole_rt);
	free(whole_ld);
	plan_free(p);
	model_free(m);
}

static void
test_page_query(void)
{
	static const char *const bad_limit[] = { "", "0", "-1", "+1", "1.5",
	    "x", "1000001", "99999999999999999999", " 1" };
	static const char *const bad_after[] = { "", "5", "5.", ".5", "0.1",
	    "-1.2", "1.-2", "1.2.3", "1.2x", "99999999999999999999.1",
	    "1.99999999999999999999", " 1.2" };
	struct err e;
	size_t limit, idx, i;
	int64_t rev;
	bool has;

	TEST_START("reads limit and after");
	ASSERT_INT_EQ(query_page(NULL, NULL, &limit, &has, &rev, &idx, &e), 0);
	ASSERT_TRUE(limit == 0 && !has);
	ASSERT_INT_EQ(query_page("1000000", "12.0", &limit, &has, &rev, &idx,
	    &e), 0);
	ASSERT_TRUE(limit == 1000000 && has && rev == 12 && idx == 0);
	ASSERT_INT_EQ(query_page("7", "9223372036854775807.567762", &limit,
	    &has, &rev, &idx, &e), 0);
	ASSERT_TRUE(limit == 7 && rev == INT64_MAX && idx == 567762);
	TEST_DONE();

	TEST_START("rejects bad limits and cursors, naming the parameter");
	for (i = 0; i < sizeof(bad_limit) / sizeof(bad_limit[0]); i++) {
		err_clear(&e);
		ASSERT_INT_EQ(query_page(bad_limit[i], NULL, &limit, &has,
		    &rev, &idx, &e), ERR_INVALID);
		ASSERT_STR_EQ(e.where, "limit");
	}
	for (i = 0; i < sizeof(bad_after) / sizeof(bad_after[0]); i++) {
		err_clear(&e);
		ASSERT_INT_EQ(query_page(NULL, bad_after[i], &limit, &has,
		    &rev, &idx, &e), ERR_INVALID);
		ASSERT_STR_EQ(e.where, "after");
		ASSERT_TRUE(!has);
	}
	TEST_DONE();
}

static void
test_choose(void)
{
	static const struct {
		const char *accept;
		size_t len;
		enum compress_coding want;
		const char *why;
	} cases[] = {
		{ NULL, SIZE_MAX, COMPRESS_IDENTITY, "no header: no "
		    "preference, sent as it is" },
		{ "", SIZE_MAX, COMPRESS_IDENTITY, "empty: identity only" },
		{ "gzip", SIZE_MAX, COMPRESS_GZIP, "listed" },
		{ "deflate", SIZE_MAX, COMPRESS_DEFLATE, "listed" },
		{ "gzip, deflate, br", SIZE_MAX, COMPRESS_GZIP, "tie: gzip" },
		{ "deflate, gzip;q=0.5", SIZE_MAX, COMPRESS_DEFLATE,
		    "higher q" },
		{ "gzip;q=0", SIZE_MAX, COMPRESS_IDENTITY, "q=0 refuses" },
		{ "gzip;q=0, deflate", SIZE_MAX, COMPRESS_DEFLATE,
		    "the other" },
		{ "*", SIZE_MAX, COMPRESS_GZIP, "* matches every coding" },
		{ "*;q=0", SIZE_MAX, COMPRESS_IDENTITY, "nothing acceptable: "
		    "no coding (12.5.3)" },
		{ "identity;q=0", SIZE_MAX, COMPRESS_IDENTITY, "nothing "
		    "acceptable: no coding" },
		{ "identity;q=0, gzip;q=0.1", 10, COMPRESS_GZIP, "identity "
		    "refused: even a tiny body is coded" },
		{ "gzip", 10, COMPRESS_IDENTITY, "tiny body" },
		{ "gzip;q=0.5, identity", SIZE_MAX, COMPRESS_IDENTITY,
		    "identity preferred" },
		{ "identity;q=0.5, *", SIZE_MAX, COMPRESS_GZIP, "* above "
		    "identity" },
		{ "GZip;Q=1.000", SIZE_MAX, COMPRESS_GZIP, "case-insensitive" },
		{ "x-gzip", SIZE_MAX, COMPRESS_GZIP, "x-gzip is gzip "
		    "(8.4.1.3)" },
		{ "gzip;q=1.5", SIZE_MAX, COMPRESS_IDENTITY, "bad qvalue: "
		    "ignored" },
		{ "gzip;q=0.0001", SIZE_MAX, COMPRESS_IDENTITY, "four "
		    "decimals: ignored" },
		{ "gzip;level=9", SIZE_MAX, COMPRESS_IDENTITY, "not a weight: "
		    "ignored" },
		{ "gzip ; q=0.3 , deflate;q=0.2", SIZE_MAX, COMPRESS_IDENTITY,
		    "identity (1) above both" },
		{ "gzip ; q=0.3 , deflate;q=0.2, identity;q=0.1", SIZE_MAX,
		    COMPRESS_GZIP, "OWS around ;" },
		{ "gzip;q=0, gzip", SIZE_MAX, COMPRESS_IDENTITY, "the first "
		    "of a repeated member counts" },
		{ ",,, deflate ,", SIZE_MAX, COMPRESS_DEFLATE, "empty list "
		    "elements" },
	};
	size_t i;

	TEST_START("chooses codings as RFC 9110, 12.5.3 says");
	for (i = 0; i < sizeof(cases) / sizeof(cases[0]); i++)
		if (compress_choose(cases[i].accept, cases[i].len) !=
		    cases[i].want)
			TAP_FAIL("Accept-Encoding \"%s\" (%s): got %d",
			    cases[i].accept != NULL ? cases[i].accept :
			    "(none)", cases[i].why, (int)compress_choose(
			    cases[i].accept, cases[i].len));
	ASSERT_STR_EQ(compress_word(COMPRESS_GZIP), "gzip");
	ASSERT_STR_EQ(compress_word(COMPRESS_DEFLATE), "deflate");
	ASSERT_TRUE(compress_word(COMPRESS_IDENTITY) == NULL);
	TEST_DONE();
}

/* Inflates n bytes at z (gzip or zlib wrapper, told by the header) into
   a new NUL-terminated string; NULL when they do not inflate. */
static char *
inflate_all(const char *z, size_t n)
{
	z_stream zs;
	char *out = NULL;
	size_t cap = 1 << 16, len = 0;
	int zr;

	memset(&zs, 0, sizeof(zs));
	if (inflateInit2(&zs, 15 + 32) != Z_OK)
		return NULL;
	zs.next_in = (Bytef *)(uintptr_t)z;
	zs.avail_in = (uInt)n;
	do {
		out = xreallocarray(out, 1, cap + 1);
		zs.next_out = (Bytef *)out + len;
		zs.avail_out = (uInt)(cap - len);
		zr = inflate(&zs, Z_NO_FLUSH);
		len = cap - zs.avail_out;
		cap *= 2;
	} while (zr == Z_OK);
	inflateEnd(&zs);
	if (zr != Z_STREAM_END || zs.avail_in != 0) {
		free(out);
		return NULL;
	}
	out[len] = '\0';
	return out;
}

/* A producer of a long JSON-like text, in pieces of varying size. */
struct text_src {
	const char *s;
	size_t len, off, step;
};

static long
text_fill(void *ctx, char *buf, size_t max)
{
	struct text_src *t = ctx;
	size_t n = t->len - t->off;

	if (n == 0)
		return HTTP_FILL_END;
	t->step = t->step % 997 + 1;
	if (n > t->step)
		n = t->step;
	if (n > max)
		n = max;
	memcpy(buf, t->s + t->off, n);
	t->off += n;
	return (long)n;
}

static void
test_compress(void)
{
	static const enum compress_coding cs[] = { COMPRESS_GZIP,
	    COMPRESS_DEFLATE };
	struct text_src t;
	struct compress *z;
	char *text, *out, *back;
	size_t len = 0, olen, i, k, cap = 1 << 20;
	unsigned char *u;
	long n;

	text = xmalloc(cap);
	for (i = 0; len + 64 < cap; i++)
		len += (size_t)snprintf(text + len, cap - len,
		    "{\"src\":\"N%zu\",\"rate_bps\":%zu.5},", i % 754,
		    i * 7919 % 100003);

	TEST_START("compresses whole buffers as gzip and zlib");
	for (k = 0; k < 2; k++) {
		ASSERT_INT_EQ(compress_buffer(cs[k], text, len, &out, &olen),
		    0);
		u = (unsigned char *)out;
		if (cs[k] == COMPRESS_GZIP)
			ASSERT_TRUE(olen > 18 && u[0] == 0x1f && u[1] == 0x8b &&
			    u[2] == 8);
		else
			ASSERT_TRUE(olen > 6 && (u[0] & 0x0f) == 8 &&
			    (u[0] * 256 + u[1]) % 31 == 0);
		ASSERT_TRUE(olen < len / 3);
		back = inflate_all(out, olen);
		ASSERT_TRUE(back != NULL && strlen(back) == len &&
		    memcmp(back, text, len) == 0);
		free(back);
		free(out);
	}
	TEST_DONE();

	TEST_START("compresses a stream piece by piece to the same text");
	for (k = 0; k < 2; k++) {
		memset(&t, 0, sizeof(t));
		t.s = text;
		t.len = len;
		z = compress_new(cs[k]);
		out = NULL;
		olen = 0;
		for (i = 0; ; i++) {
			/* Small and odd buffers, as a slow client gives. */
			size_t max = 1 + i % 1500;

			out = xreallocarray(out, 1, olen + max);
			n = compress_fill(z, text_fill, &t, out + olen, max);
			if (n == HTTP_FILL_END)
				break;
			ASSERT_TRUE(n > 0 && (size_t)n <= max);
			if (n <= 0)
				break;
			olen += (size_t)n;
		}
		compress_free(z);
		back = inflate_all(out, olen);
		ASSERT_TRUE(back != NULL && strlen(back) == len &&
		    memcmp(back, text, len) == 0);
		free(back);
		free(out);
	}
	TEST_DONE();
	free(text);
}

int
main(void)
{
	test_lists();
	test_page_query();
	test_choose();
	test_compress();
	return tap_finish();
}
