/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Unit tests for the SNDlib native format importer. */

/*
 * DESIGN
 * Three kinds of check.  (1) Every instance in tests/data/sndlib parses,
 * and its node, link and demand counts equal the N/L/D column of
 * tests/data/PROVENANCE.md, which was counted from the files independently
 * of this importer.  (2) Single values read by hand from the files, with
 * the file line quoted beside each check, and demand totals summed with
 * awk.  (3) Broken inputs, each a one-line edit of a small valid network,
 * must fail with ERR_INVALID at the right line.  Inputs are placed so that
 * their last byte sits just before an unmapped page: reading past len
 * crashes the test instead of passing silently.  Run from the repository
 * root.
 */

#include <sys/mman.h>

#include <math.h>
#include <stdbool.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include "../../../daemon/engine/sndlib.h"
#include "../../../daemon/engine/model.h"
#include "../../../daemon/base/err.h"
#include "../../tap.h"

#define DATA	"tests/data/sndlib/"

/* ---- inputs before a guard page ---- */

struct guarded {
	char *map;		/* start of the mapping */
	size_t maplen;
	char *text;		/* input; text + len is the guard page */
};

static void
guard_put(struct guarded *g, const char *src, size_t len)
{
	size_t pg = (size_t)sysconf(_SC_PAGESIZE);
	size_t body = (len + pg - 1) / pg * pg;

	g->maplen = body + pg;
	g->map = mmap(NULL, g->maplen, PROT_READ | PROT_WRITE,
	    MAP_PRIVATE | MAP_ANONYMOUS, -1, 0);
	if (g->map == MAP_FAILED) {
		perror("mmap");
		exit(2);
	}
	if (mprotect(g->map + body, pg, PROT_NONE) != 0) {
		perror("mprotect");
		exit(2);
	}
	g->text = g->map + body - len;
	memcpy(g->text, src, len);
}

static void
guard_free(struct guarded *g)
{
	munmap(g->map, g->maplen);
}

/* Parses len bytes of src placed before a guard page. */
static int
parse_guarded(const char *src, size_t len, struct model **mp,
    struct sndlib_info *info, struct err *e)
{
	struct guarded g;
	int r;

	guard_put(&g, src, len);
	err_clear(e);
	r = sndlib_parse_info(g.text, len, mp, info, e);
	guard_free(&g);
	return r;
}

static char *
slurp(const char *path, size_t *lenp)
{
	FILE *f = fopen(path, "rb");
	char *buf;
	long n;

	if (f == NULL) {
		perror(path);
		exit(2);
	}
	fseek(f, 0, SEEK_END);
	n = ftell(f);
	fseek(f, 0, SEEK_SET);
	buf = malloc((size_t)n + 1);
	if (buf == NULL || fread(buf, 1, (size_t)n, f) != (size_t)n) {
		fprintf(stderr, "%s: read failed\n", path);
		exit(2);
	}
	fclose(f);
	*lenp = (size_t)n;
	return buf;
}

static struct model *
load(const char *name, struct sndlib_info *info)
{
	char path[256];
	struct model *m = NULL;
	struct err e = { 0 };
	size_t len;
	char *text;
	int r;

	snprintf(path, sizeof(path), DATA "%s.txt", name);
	text = slurp(path, &len);
	r = parse_guarded(text, len, &m, info, &e);
	if (r != 0)
		printf("# %s: %s: %s\n", name, e.where, e.msg);
	free(text);
	return m;
}

static const struct link *
link_by_id(const struct model *m, const char *lid)
{
	long i = model_find_link(m, lid);

	return i < 0 ? NULL : &m->links[i];
}

static const char *
node_id(const struct model *m, size_t i)
{
	return m->nodes[i].id;
}

/* ---- (1) counts ---- */

/* N/L/D as listed in tests/data/PROVENANCE.md (counted from the files). */
static const struct {
	const char *name;
	size_t n, l, d;
} counts[] = {
	{ "abilene", 12, 15, 132 },
	{ "atlanta", 15, 22, 210 },
	{ "brain", 161, 332, 14311 },
	{ "geant", 22, 36, 462 },
	{ "germany50", 50, 88, 662 },
	{ "janos-us-ca", 39, 122, 1482 },
	{ "nobel-eu", 28, 41, 378 },
	{ "polska", 12, 18, 66 },
	{ "ta2", 65, 108, 1869 },
	{ "zib54", 54, 81, 1501 },
};

static void
test_counts(void)
{
	char name[128];
	size_t i;

	for (i = 0; i < sizeof(counts) / sizeof(counts[0]); i++) {
		struct model *m;

		snprintf(name, sizeof(name), "reads %s with the N/L/D of "
		    "PROVENANCE.md", counts[i].name);
		TEST_START(name);
		m = load(counts[i].name, NULL);
		ASSERT_TRUE(m != NULL);
		if (m != NULL) {
			ASSERT_INT_EQ(m->n_nodes, counts[i].n);
			ASSERT_INT_EQ(m->n_links, counts[i].l);
			ASSERT_INT_EQ(m->n_demands, counts[i].d);
		}
		model_free(m);
		TEST_DONE();
	}
}

/* ---- (2) values read by hand ---- */

static void
test_abilene(void)
{
	struct sndlib_info info;
	const struct link *l;
	const struct demand *d;
	struct model *m;
	double sum = 0;
	size_t i;
	long n;

	TEST_START("abilene: MBITPERSEC rates and pre-installed capacity "
	    "become bit/s");
	m = load("abilene", &info);
	ASSERT_TRUE(m != NULL);
	if (m == NULL)
		goto done;
	/* abilene.txt line 11: "unit  = MBITPERSEC". */
	ASSERT_STR_EQ(info.unit, "MBITPERSEC");
	ASSERT_DBL_NEAR(info.unit_bps, 1e6, 0);
	/* Line 41: "ATLAng_IPLSng ( IPLSng ATLAng ) 2480.00 0.00 0.00 0.00
	   ( 40000.00 591.00 )": pre-installed 2480 Mbit/s, routing cost 0. */
	l = link_by_id(m, "ATLAng_IPLSng");
	ASSERT_TRUE(l != NULL);
	if (l == NULL)
		goto done;
	ASSERT_DBL_NEAR(l->capacity_bps, 2480e6, 1e-12);
	ASSERT_DBL_NEAR(l->te_metric, 1.0, 0);
	ASSERT_STR_EQ(node_id(m, l->a), "IPLSng");
	ASSERT_STR_EQ(node_id(m, l->b), "ATLAng");
	ASSERT_TRUE(l->up);
	/* Line 61: "IPLSng_STTLng ( IPLSng STTLng ) 1 3580.00 UNLIMITED". */
	d = &m->demands[0];
	ASSERT_STR_EQ(node_id(m, d->src), "IPLSng");
	ASSERT_STR_EQ(node_id(m, d->dst), "STTLng");
	ASSERT_DBL_NEAR(d->rate_bps, 3580e6, 1e-12);
	ASSERT_INT_EQ(d->priority, 0);
	/* Line 20: "ATLAM5 ( -84.3833 33.75 )" is (longitude latitude). */
	n = model_find_node(m, "ATLAM5");
	ASSERT_TRUE(n >= 0);
	if (n < 0)
		goto done;
	ASSERT_TRUE(m->nodes[n].has_coords);
	ASSERT_DBL_NEAR(m->nodes[n].lon, -84.3833, 1e-12);
	ASSERT_DBL_NEAR(m->nodes[n].lat, 33.75, 1e-12);
	ASSERT_TRUE(m->nodes[n].name == NULL);
	/* Sum of demand values: awk '/^DEMANDS/{d=1;next} /^\)/{d=0}
	   d&&NF==8{s+=$7} END{print s}' abilene.txt gives 3000002 (Mbit/s). */
	for (i = 0; i < m->n_demands; i++)
		sum += m->demands[i].rate_bps;
	ASSERT_DBL_NEAR(sum, 3000002e6, 1e-12);
done:
	model_free(m);
	TEST_DONE();
}

static void
test_brain(void)
{
	struct sndlib_info info;
	const struct link *l;
	struct model *m;
	double sum = 0;
	size_t i;

	TEST_START("brain: BITSPERSEC rates are kept as they are; capacity "
	    "comes from the first module");
	m = load("brain", &info);
	ASSERT_TRUE(m != NULL);
	if (m == NULL)
		goto done;
	ASSERT_STR_EQ(info.unit, "BITSPERSEC");
	ASSERT_DBL_NEAR(info.unit_bps, 1.0, 0);
	/* Line 188: "HU_HU5 ( HU HU5 ) 0.00 0.00 0.00 0.00 ( 1000000000.00
	   136.42 10000000000.00 1044.17 )": no pre-installed capacity, first
	   module 1e9 bit/s. */
	l = link_by_id(m, "HU_HU5");
	ASSERT_TRUE(l != NULL);
	if (l == NULL)
		goto done;
	ASSERT_DBL_NEAR(l->capacity_bps, 1e9, 1e-12);
	/* Line 527: "ADH10_ADH11 ( ADH10 ADH11 ) 1 3.00 UNLIMITED". */
	ASSERT_STR_EQ(node_id(m, m->demands[0].src), "ADH10");
	ASSERT_STR_EQ(node_id(m, m->demands[0].dst), "ADH11");
	ASSERT_DBL_NEAR(m->demands[0].rate_bps, 3.0, 0);
	/* awk sum of demand values over brain.txt (as for abilene):
	   12323319745 bit/s. */
	for (i = 0; i < m->n_demands; i++)
		sum += m->demands[i].rate_bps;
	ASSERT_DBL_NEAR(sum, 12323319745.0, 1e-12);
done:
	model_free(m);
	TEST_DONE();
}

static void
test_routing_cost_and_planar(void)
{
	struct sndlib_info info;
	const struct link *l;
	struct model *m;
	size_t i, with = 0;

	TEST_START("atlanta: routing cost becomes the TE metric; no META "
	    "means Mbit/s; planar coordinates are not lat/lon");
	m = load("atlanta", &info);
	ASSERT_TRUE(m != NULL);
	if (m == NULL)
		goto done;
	ASSERT_STR_EQ(info.unit, "");
	ASSERT_DBL_NEAR(info.unit_bps, 1e6, 0);
	/* Line 31: "L1 ( N1 N6 ) 11000.00 0.00 67.80 0.00 ( 1000.00 ... )". */
	l = link_by_id(m, "L1");
	ASSERT_TRUE(l != NULL);
	if (l == NULL)
		goto done;
	ASSERT_DBL_NEAR(l->capacity_bps, 11000e6, 1e-12);
	ASSERT_DBL_NEAR(l->te_metric, 67.8, 1e-12);
	/* Node x runs 56..516 in the file: not a longitude. */
	for (i = 0; i < m->n_nodes; i++)
		with += m->nodes[i].has_coords;
	ASSERT_INT_EQ(with, 0);
	ASSERT_INT_EQ(info.n_planar, 15);
done:
	model_free(m);
	TEST_DONE();
}

static void
test_modules(void)
{
	const struct link *l;
	struct model *m;

	TEST_START("nobel-eu and geant: capacity is the first of many "
	    "modules");
	/* nobel-eu.txt line 44: "L1 ( Amsterdam Brussels ) 0.00 0.00 0.00
	   0.00 ( 20.00 3580.00 40.00 4580.00 ... 800.00 91600.00 )". */
	m = load("nobel-eu", NULL);
	ASSERT_TRUE(m != NULL);
	l = m != NULL ? link_by_id(m, "L1") : NULL;
	ASSERT_TRUE(l != NULL);
	if (l != NULL)
		ASSERT_DBL_NEAR(l->capacity_bps, 20e6, 1e-12);
	model_free(m);
	/* geant.txt line 49: "at1.at_ch1.ch ( at1.at ch1.ch ) 0.00 0.00
	   0.00 0.00 ( 40000.00 804.00 )". */
	m = load("geant", NULL);
	ASSERT_TRUE(m != NULL);
	l = m != NULL ? link_by_id(m, "at1.at_ch1.ch") : NULL;
	ASSERT_TRUE(l != NULL);
	if (l != NULL) {
		ASSERT_DBL_NEAR(l->capacity_bps, 40000e6, 1e-12);
		ASSERT_STR_EQ(node_id(m, l->a), "at1.at");
	}
	model_free(m);
	TEST_DONE();
}

static void
test_polska(void)
{
	struct sndlib_info info;
	struct model *m;
	const struct demand *d;

	TEST_START("polska: skips ADMISSIBLE_PATHS and reads a file without "
	    "a final newline");
	m = load("polska", &info);
	ASSERT_TRUE(m != NULL);
	if (m == NULL)
		goto done;
	/* Line 118, the last demand: "Demand_10_11 ( Warsaw Wroclaw ) 1
	   141.00 UNLIMITED". */
	d = &m->demands[m->n_demands - 1];
	ASSERT_STR_EQ(node_id(m, d->src), "Warsaw");
	ASSERT_STR_EQ(node_id(m, d->dst), "Wroclaw");
	ASSERT_DBL_NEAR(d->rate_bps, 141e6, 1e-12);
	/* awk 'NR>125 && $0 !~ /^[ \t]*(#|$)/' polska.txt | wc -l: 595. */
	ASSERT_INT_EQ(info.n_path_lines, 595);
done:
	model_free(m);
	TEST_DONE();
}

static void
test_ta2_zib54_janos(void)
{
	struct sndlib_info info;
	const struct link *l, *l2;
	struct model *m;
	long n;

	TEST_START("ta2: hop limits counted and ignored; pre-installed "
	    "capacity in Mbit/s");
	m = load("ta2", &info);
	ASSERT_TRUE(m != NULL);
	if (m != NULL) {
		/* PROVENANCE.md: 1767 demands have a hop limit of 20. */
		ASSERT_INT_EQ(info.n_hop_limited, 1767);
		/* Line 83: "L3_N5_N51 ( N5 N51 ) 504000.00 147418.20 ...". */
		l = link_by_id(m, "L3_N5_N51");
		ASSERT_TRUE(l != NULL);
		if (l != NULL)
			ASSERT_DBL_NEAR(l->capacity_bps, 504000e6, 1e-12);
		/* Line 196: "D1_N30_N28 ( N30 N28 ) 1 896660.00 20". */
		ASSERT_DBL_NEAR(m->demands[0].rate_bps, 896660e6, 1e-12);
	}
	model_free(m);
	TEST_DONE();

	TEST_START("zib54: parallel links are separate links");
	m = load("zib54", NULL);
	ASSERT_TRUE(m != NULL);
	if (m != NULL) {
		/* Lines 137-138: L68_N52_N21 and L69_N52_N21, both N52 N21,
		   module 2016.00. */
		l = link_by_id(m, "L68_N52_N21");
		l2 = link_by_id(m, "L69_N52_N21");
		ASSERT_TRUE(l != NULL && l2 != NULL);
		if (l != NULL && l2 != NULL) {
			ASSERT_INT_EQ(l->a, l2->a);
			ASSERT_INT_EQ(l->b, l2->b);
			ASSERT_DBL_NEAR(l2->capacity_bps, 2016e6, 1e-12);
		}
	}
	model_free(m);
	TEST_DONE();

	TEST_START("janos-us-ca: coordinates are (longitude latitude)");
	m = load("janos-us-ca", NULL);
	ASSERT_TRUE(m != NULL);
	if (m != NULL) {
		/* Line 9: "Vancouver ( -123.10 49.22 )". */
		n = model_find_node(m, "Vancouver");
		ASSERT_TRUE(n >= 0);
		if (n >= 0) {
			ASSERT_TRUE(m->nodes[n].has_coords);
			ASSERT_DBL_NEAR(m->nodes[n].lat, 49.22, 1e-12);
			ASSERT_DBL_NEAR(m->nodes[n].lon, -123.10, 1e-12);
		}
	}
	model_free(m);
	TEST_DONE();
}

/* ---- (3) broken inputs ---- */

/*
 * A small valid network in the layout of the SNDlib files.  Line numbers
 * matter to the tests below: NODES opens on line 6, LINKS on 11, DEMANDS
 * on 16, ADMISSIBLE_PATHS on 20.
 */
static const char base[] =
    "?SNDlib native format; type: network; version: 1.0\n"	/* 1 */
    "# network tiny\n"						/* 2 */
    "META (\n"							/* 3 */
    "  unit  = GBITPERSEC\n"					/* 4 */
    ")\n"							/* 5 */
    "NODES (\n"							/* 6 */
    "  A ( 10.5 50.25 )\n"					/* 7 */
    "  B ( 11.0 51.0 )\n"					/* 8 */
    "  C ( 12.0 52.0 )\n"					/* 9 */
    ")\n"							/* 10 */
    "LINKS (\n"							/* 11 */
    "  AB ( A B ) 10.00 0.00 3.00 0.00 ( 40.00 1.00 )\n"	/* 12 */
    "  BC ( B C ) 0.00 0.00 0.00 0.00 ( 100.00 1.00 )\n"	/* 13 */
    "  CA ( C A ) 0 0 0 0 ( 1.5e1 2 )\n"			/* 14 */
    ")\n"							/* 15 */
    "DEMANDS (\n"						/* 16 */
    "  D1 ( A C ) 1 2.50 UNLIMITED\n"				/* 17 */
    "  D2 ( C B ) 1 0.25 4\n"					/* 18 */
    ")\n"							/* 19 */
    "ADMISSIBLE_PATHS (\n"					/* 20 */
    "  D1 (\n"							/* 21 */
    "    P_0 ( AB BC )\n"					/* 22 */
    "  )\n"							/* 23 */
    ")\n";							/* 24 */

/* Returns base with line lineno (1-based) replaced by repl. */
static char *
edit(int lineno, const char *repl)
{
	char *out = malloc(sizeof(base) + strlen(repl) + 2);
	const char *p = base, *nl;
	size_t o = 0;
	int i;

	if (out == NULL)
		exit(2);
	for (i = 1; *p != '\0'; i++) {
		nl = strchr(p, '\n');
		if (i == lineno) {
			memcpy(out + o, repl, strlen(repl));
			o += strlen(repl);
		} else {
			memcpy(out + o, p, (size_t)(nl - p) + 1);
			o += (size_t)(nl - p) + 1;
		}
		p = nl + 1;
	}
	out[o] = '\0';
	return out;
}

static void
test_base(void)
{
	struct sndlib_info info;
	struct model *m = NULL;
	struct err e = { 0 };
	const struct link *l;
	int r;

	TEST_START("reads a small hand-written network with GBITPERSEC");
	r = parse_guarded(base, strlen(base), &m, &info, &e);
	ASSERT_INT_EQ(r, 0);
	if (m == NULL)
		goto done;
	ASSERT_INT_EQ(m->n_nodes, 3);
	ASSERT_INT_EQ(m->n_links, 3);
	ASSERT_INT_EQ(m->n_demands, 2);
	l = link_by_id(m, "AB");		/* pre-installed 10 G */
	ASSERT_TRUE(l != NULL);
	if (l != NULL) {
		ASSERT_DBL_NEAR(l->capacity_bps, 10e9, 1e-12);
		ASSERT_DBL_NEAR(l->te_metric, 3.0, 0);
	}
	l = link_by_id(m, "CA");		/* module "1.5e1" = 15 G */
	ASSERT_TRUE(l != NULL);
	if (l != NULL)
		ASSERT_DBL_NEAR(l->capacity_bps, 15e9, 1e-12);
	ASSERT_DBL_NEAR(m->demands[1].rate_bps, 0.25e9, 1e-12);
	ASSERT_INT_EQ(info.n_hop_limited, 1);
	ASSERT_INT_EQ(info.n_path_lines, 4);
done:
	model_free(m);
	TEST_DONE();
}

static void
test_crlf(void)
{
	char buf[sizeof(base) * 2];
	struct model *m = NULL;
	struct err e = { 0 };
	size_t i, o = 0;
	int r;

	TEST_START("reads CRLF line ends");
	for (i = 0; base[i] != '\0'; i++) {
		if (base[i] == '\n')
			buf[o++] = '\r';
		buf[o++] = base[i];
	}
	r = parse_guarded(buf, o, &m, NULL, &e);
	ASSERT_INT_EQ(r, 0);
	if (m != NULL)
		ASSERT_INT_EQ(m->n_demands, 2);
	model_free(m);
	TEST_DONE();
}

/* Each case replaces one line of base and expects an error there. */
static const struct {
	const char *what;
	int lineno;		/* line replaced */
	const char *repl;
	int err_line;		/* line the error must name */
} bad[] = {
	{ "rejects a link to an unknown node", 12,
	  "  AB ( A X ) 10 0 0 0 ( )\n", 12 },
	{ "rejects a demand from an unknown node", 17,
	  "  D1 ( Q C ) 1 2 UNLIMITED\n", 17 },
	{ "rejects NaN as a capacity", 12,
	  "  AB ( A B ) nan 0 0 0 ( 40 1 )\n", 12 },
	{ "rejects inf as a demand value", 17,
	  "  D1 ( A C ) 1 inf UNLIMITED\n", 17 },
	{ "rejects a demand value that overflows to infinity", 17,
	  "  D1 ( A C ) 1 1e999 UNLIMITED\n", 17 },
	{ "rejects a negative demand value", 17,
	  "  D1 ( A C ) 1 -2 UNLIMITED\n", 17 },
	{ "rejects a negative module capacity", 13,
	  "  BC ( B C ) 0 0 0 0 ( -100 1 )\n", 13 },
	{ "rejects a NaN coordinate", 8, "  B ( nan 51 )\n", 8 },
	{ "rejects a hex float", 12,
	  "  AB ( A B ) 0x10 0 0 0 ( 40 1 )\n", 12 },
	{ "rejects a link with equal ends", 13,
	  "  BC ( B B ) 0 0 0 0 ( 100 1 )\n", 13 },
	{ "rejects a demand with equal ends", 18,
	  "  D2 ( C C ) 1 1 UNLIMITED\n", 18 },
	{ "rejects a duplicate node id", 9, "  A ( 12.0 52.0 )\n", 9 },
	{ "rejects a duplicate link id", 13,
	  "  AB ( B C ) 0 0 0 0 ( 100 1 )\n", 13 },
	{ "rejects a duplicate demand id", 18,
	  "  D1 ( C B ) 1 1 UNLIMITED\n", 18 },
	{ "rejects a link with no capacity and no module", 13,
	  "  BC ( B C ) 0 0 0 0 ( )\n", 13 },
	{ "rejects an unknown section", 20, "PATHWAYS (\n", 20 },
	{ "rejects an unknown unit", 4, "  unit = FURLONGS\n", 4 },
	{ "rejects a module list left open", 12,
	  "  AB ( A B ) 10 0 0 0 ( 40 1\n", 12 },
	{ "rejects a module capacity without its cost", 12,
	  "  AB ( A B ) 10 0 0 0 ( 40 )\n", 12 },
	{ "rejects words after an entry", 7,
	  "  A ( 10.5 50.25 ) extra\n", 7 },
	{ "rejects a missing field", 17, "  D1 ( A C ) 1 2\n", 17 },
	{ "rejects an extra ')' in ADMISSIBLE_PATHS", 23, "  ) ) )\n", 23 },
	{ "rejects nesting too deep in ADMISSIBLE_PATHS", 22,
	  "    P_0 ( AB ( BC ) )\n", 22 },
	{ "rejects a repeated section", 20, "META (\n", 20 },
	{ "rejects a control character", 2, "# net\001work\n", 2 },
};

static void
test_bad(void)
{
	char name[160], want[32];
	size_t i;

	for (i = 0; i < sizeof(bad) / sizeof(bad[0]); i++) {
		struct model *m = NULL;
		struct err e = { 0 };
		char *text = edit(bad[i].lineno, bad[i].repl);
		int r;

		snprintf(name, sizeof(name), "%s", bad[i].what);
		TEST_START(name);
		r = parse_guarded(text, strlen(text), &m, NULL, &e);
		ASSERT_INT_EQ(r, ERR_INVALID);
		ASSERT_TRUE(m == NULL);
		snprintf(want, sizeof(want), "line %d", bad[i].err_line);
		ASSERT_STR_EQ(e.where, want);
		ASSERT_TRUE(e.msg[0] != '\0');
		printf("# %s: %s\n", e.where, e.msg);
		free(text);
		TEST_DONE();
	}
}

static void
test_nul_and_long_ids(void)
{
	char text[sizeof(base) + 2 * MODEL_ID_MAX];
	char longid[MODEL_ID_MAX + 2];
	struct model *m = NULL;
	struct err e = { 0 };
	char *t;
	int r;

	TEST_START("rejects a NUL byte inside a node id");
	memcpy(text, base, sizeof(base));
	text[strstr(base, "  B (") - base + 2] = '\0';
	r = parse_guarded(text, sizeof(base) - 1, &m, NULL, &e);
	ASSERT_INT_EQ(r, ERR_INVALID);
	ASSERT_STR_EQ(e.where, "line 8");
	model_free(m);
	TEST_DONE();

	TEST_START("rejects a node id one byte over MODEL_ID_MAX");
	memset(longid, 'x', MODEL_ID_MAX + 1);
	longid[MODEL_ID_MAX + 1] = '\0';
	snprintf(text, sizeof(text), "  %s ( 1 2 )\n", longid);
	t = edit(9, text);
	r = parse_guarded(t, strlen(t), &m, NULL, &e);
	ASSERT_INT_EQ(r, ERR_INVALID);
	ASSERT_STR_EQ(e.where, "line 9");
	free(t);
	model_free(m);
	m = NULL;
	TEST_DONE();

	TEST_START("accepts an id of exactly MODEL_ID_MAX bytes and a node "
	    "without coordinates");
	longid[MODEL_ID_MAX] = '\0';
	snprintf(text, sizeof(text), "NODES (\n  %s ( 1 2 )\n  B\n)\n"
	    "LINKS (\n  L ( %s B ) 1 0 0 0 ( )\n)\nDEMANDS (\n)\n",
	    longid, longid);
	r = parse_guarded(text, strlen(text), &m, NULL, &e);
	ASSERT_INT_EQ(r, 0);
	if (m != NULL) {
		ASSERT_INT_EQ(strlen(m->nodes[0].id), MODEL_ID_MAX);
		ASSERT_TRUE(!m->nodes[1].has_coords);
		ASSERT_INT_EQ(m->n_links, 1);
		ASSERT_INT_EQ(m->n_demands, 0);
	}
	model_free(m);
	m = NULL;
	TEST_DONE();

	TEST_START("rejects an over-long demand id");
	memset(longid, 'd', MODEL_ID_MAX + 1);
	longid[MODEL_ID_MAX + 1] = '\0';
	snprintf(text, sizeof(text), "  %s ( A C ) 1 1 UNLIMITED\n", longid);
	t = edit(17, text);
	r = parse_guarded(t, strlen(t), &m, NULL, &e);
	ASSERT_INT_EQ(r, ERR_INVALID);
	ASSERT_STR_EQ(e.where, "line 17");
	free(t);
	model_free(m);
	TEST_DONE();
}

static void
test_missing(void)
{
	struct model *m = NULL;
	struct err e = { 0 };
	size_t cut;
	char *t;
	int r;

	TEST_START("rejects a file truncated inside DEMANDS");
	cut = (size_t)(strstr(base, "  D2") - base);
	r = parse_guarded(base, cut, &m, NULL, &e);
	ASSERT_INT_EQ(r, ERR_INVALID);
	ASSERT_TRUE(strstr(e.msg, "DEMANDS") != NULL);
	ASSERT_TRUE(m == NULL);
	TEST_DONE();

	TEST_START("rejects a section without its terminator");
	/* Drop the ")" closing NODES: "LINKS (" then reads as a node. */
	t = edit(10, "");
	r = parse_guarded(t, strlen(t), &m, NULL, &e);
	ASSERT_INT_EQ(r, ERR_INVALID);
	ASSERT_TRUE(m == NULL);
	free(t);
	TEST_DONE();

	TEST_START("rejects input without DEMANDS");
	cut = (size_t)(strstr(base, "DEMANDS") - base);
	r = parse_guarded(base, cut, &m, NULL, &e);
	ASSERT_INT_EQ(r, ERR_INVALID);
	ASSERT_TRUE(strstr(e.msg, "missing section DEMANDS") != NULL);
	TEST_DONE();

	TEST_START("rejects empty input");
	r = parse_guarded("", 0, &m, NULL, &e);
	ASSERT_INT_EQ(r, ERR_INVALID);
	ASSERT_STR_EQ(e.where, "line 1");
	TEST_DONE();
}

/*
 * Every prefix of base, placed before the guard page.  Only four are
 * complete networks: up to the ")" closing DEMANDS (line 19), with or
 * without its newline, and the whole text, with or without the last
 * newline.  Every other prefix must fail with ERR_INVALID.
 */
static void
test_prefixes(void)
{
	size_t len = strlen(base), p19, n, wrong = 0;
	struct model *m;
	struct err e;
	bool ok;
	int r;

	TEST_START("every prefix of a network parses or fails cleanly, "
	    "without reading past len");
	p19 = (size_t)(strstr(base, ")\nADMISSIBLE") - base);
	for (n = 0; n <= len; n++) {
		m = NULL;
		r = parse_guarded(base, n, &m, NULL, &e);
		ok = n == p19 + 1 || n == p19 + 2 || n == len - 1 || n == len;
		if (ok ? r != 0 || m == NULL : r != ERR_INVALID || m != NULL) {
			printf("# prefix %zu: r=%d %s %s\n", n, r, e.where,
			    e.msg);
			wrong++;
		}
		model_free(m);
	}
	ASSERT_INT_EQ(wrong, 0);
	TEST_DONE();
}

int
main(void)
{
	test_counts();
	test_abilene();
	test_brain();
	test_routing_cost_and_planar();
	test_modules();
	test_polska();
	test_ta2_zib54_janos();
	test_base();
	test_crlf();
	test_bad();
	test_nul_and_long_ids();
	test_missing();
	test_prefixes();
	return tap_finish();
}
