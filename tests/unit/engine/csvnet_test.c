/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Unit tests for the CSV network format reader and writer. */

/*
 * DESIGN
 * Values in the hand-written samples are checked against what the sample
 * says (derivations beside each check).  Quoting is checked against an
 * outside reader: Python's csv module (RFC 4180 dialect "excel"), run as
 * /usr/bin/python3 on the same bytes.  The demo network is read both by
 * csvnet_parse() and by a few lines of Python, and the counts and sums
 * must agree.  Writing is checked by round trips of the SNDlib instances
 * in tests/data/sndlib, whose values sndlib_test.c checks by hand.  Every
 * parsed input sits just before an unmapped page, so reading past len
 * crashes.  Run from the repository root.
 */

#include <sys/mman.h>

#include <math.h>
#include <stdbool.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include "../../../daemon/engine/csvnet.h"
#include "../../../daemon/engine/sndlib.h"
#include "../../../daemon/engine/model.h"
#include "../../../daemon/base/err.h"
#include "../../tap.h"

#define PYTHON	"/usr/bin/python3"
#define DEMO	"deploy/demo/network.csv"

/* ---- helpers ---- */

/* Parses src[0 .. len-1] copied so that src + len is an unmapped page. */
static int
parse_guarded(const char *src, size_t len, struct model **mp,
    struct err *e)
{
	size_t pg = (size_t)sysconf(_SC_PAGESIZE);
	size_t body = (len + pg - 1) / pg * pg;
	char *map;
	int r;

	map = mmap(NULL, body + pg, PROT_READ | PROT_WRITE,
	    MAP_PRIVATE | MAP_ANONYMOUS, -1, 0);
	if (map == MAP_FAILED || mprotect(map + body, pg, PROT_NONE) != 0) {
		perror("mmap");
		exit(2);
	}
	memcpy(map + body - len, src, len);
	err_clear(e);
	r = csvnet_parse(map + body - len, len, mp, e);
	munmap(map, body + pg);
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
	if (buf == NULL || fread(buf, 1, (size_t)n, f) != (size_t)n)
		exit(2);
	buf[n] = '\0';
	fclose(f);
	*lenp = (size_t)n;
	return buf;
}

static const char *
nid(const struct model *m, size_t i)
{
	return m->nodes[i].id;
}

/* ---- reading ---- */

static const char sample[] =
    "\xef\xbb\xbf# kind,id,name,lat,lon\r\n"			/* 1 */
    "demand,east,west,2.5G,1\r\n"				/* 2 */
    "demand,west,east,750M\r\n"					/* 3 */
    "node,west,\"Port \"\"Old\"\" Harbour, quay 3\",57.25,-28.5\r\n"	/* 4 */
    "node,east,,,\r\n"						/* 5 */
    "  node , mid , Middle Fen \r\n"				/* 6 */
    ",,,,\r\n"							/* 7 */
    "\r\n"							/* 8 */
    "link,w-m,west,mid,100G,10,up\r\n"				/* 9 */
    "link,m-e,mid,east,40G\r\n"					/* 10 */
    "link,w-e,west,east,10000M,25.5,DOWN,,\r\n"			/* 11 */
    "   # a comment with a \"stray quote\r\n"			/* 12 */
    "demand,mid,west,1.5k,2\r\n"				/* 13 */
    "demand,east,mid,0,0";					/* 14 */

static void
test_sample(void)
{
	struct model *m = NULL;
	struct err e = { 0 };
	int r;

	TEST_START("reads every kind of row, in any order, with RFC 4180 "
	    "quoting, CRLF, BOM, comments and defaults");
	r = parse_guarded(sample, sizeof(sample) - 1, &m, &e);
	if (r != 0)
		printf("# %s: %s\n", e.where, e.msg);
	ASSERT_INT_EQ(r, 0);
	if (m == NULL)
		goto done;
	ASSERT_INT_EQ(m->n_nodes, 3);
	ASSERT_INT_EQ(m->n_links, 3);
	ASSERT_INT_EQ(m->n_demands, 4);
	if (m->n_nodes != 3 || m->n_links != 3 || m->n_demands != 4)
		goto done;
	/* Row 4: nodes are kept in row order; "" inside quotes is ". */
	ASSERT_STR_EQ(nid(m, 0), "west");
	ASSERT_STR_EQ(m->nodes[0].name, "Port \"Old\" Harbour, quay 3");
	ASSERT_TRUE(m->nodes[0].has_coords);
	ASSERT_DBL_NEAR(m->nodes[0].lat, 57.25, 0);
	ASSERT_DBL_NEAR(m->nodes[0].lon, -28.5, 0);
	/* Row 5: empty name and coordinates. */
	ASSERT_TRUE(m->nodes[1].name == NULL);
	ASSERT_TRUE(!m->nodes[1].has_coords);
	/* Row 6: unquoted fields lose their blanks. */
	ASSERT_STR_EQ(nid(m, 2), "mid");
	ASSERT_STR_EQ(m->nodes[2].name, "Middle Fen");
	/* Row 9: 100G = 100e9 bit/s, metric 10, up. */
	ASSERT_STR_EQ(m->links[0].id, "w-m");
	ASSERT_DBL_NEAR(m->links[0].capacity_bps, 100e9, 0);
	ASSERT_DBL_NEAR(m->links[0].te_metric, 10, 0);
	ASSERT_TRUE(m->links[0].up);
	/* Row 10: metric and state left out: 1 and up. */
	ASSERT_DBL_NEAR(m->links[1].capacity_bps, 40e9, 0);
	ASSERT_DBL_NEAR(m->links[1].te_metric, 1, 0);
	ASSERT_TRUE(m->links[1].up);
	/* Row 11: 10000M = 1e10; "DOWN" in any case; trailing ",," */
	ASSERT_DBL_NEAR(m->links[2].capacity_bps, 1e10, 0);
	ASSERT_DBL_NEAR(m->links[2].te_metric, 25.5, 0);
	ASSERT_TRUE(!m->links[2].up);
	ASSERT_STR_EQ(nid(m, m->links[2].a), "west");
	ASSERT_STR_EQ(nid(m, m->links[2].b), "east");
	/* Demands in row order: rows 2, 3, 13, 14. */
	ASSERT_STR_EQ(nid(m, m->demands[0].src), "east");
	ASSERT_STR_EQ(nid(m, m->demands[0].dst), "west");
	ASSERT_DBL_NEAR(m->demands[0].rate_bps, 2.5e9, 0);
	ASSERT_INT_EQ(m->demands[0].priority, 1);
	ASSERT_DBL_NEAR(m->demands[1].rate_bps, 750e6, 0);
	ASSERT_INT_EQ(m->demands[1].priority, 0);
	ASSERT_DBL_NEAR(m->demands[2].rate_bps, 1500, 0);
	ASSERT_INT_EQ(m->demands[2].priority, 2);
	ASSERT_DBL_NEAR(m->demands[3].rate_bps, 0, 0);
done:
	model_free(m);
	TEST_DONE();
}

/*
 * Python's csv module reads the node names of the sample; ours must match
 * field for field.  The BOM and comment lines are ours to skip, so Python
 * is given the rows from line 2 on and asked only about node rows.
 */
static void
test_python_quoting(void)
{
	char tmpl[] = "/tmp/weft-csvnet-XXXXXX", cmd[512], line[512];
	struct model *m = NULL;
	struct err e = { 0 };
	const char *body = strstr(sample, "\r\n") + 2;
	FILE *f, *p;
	size_t i = 0;
	int fd, r;

	TEST_START("quoted names agree with Python's csv module");
	r = parse_guarded(sample, sizeof(sample) - 1, &m, &e);
	ASSERT_INT_EQ(r, 0);
	fd = mkstemp(tmpl);
	ASSERT_TRUE(fd >= 0);
	if (fd < 0 || m == NULL)
		goto done;
	f = fdopen(fd, "w");
	fputs(body, f);
	fclose(f);
	snprintf(cmd, sizeof(cmd), PYTHON " -c '"
	    "import csv, sys\n"
	    "for row in csv.reader(open(sys.argv[1], newline=\"\")):\n"
	    "    if row and row[0].strip() == \"node\":\n"
	    "        print(\"[\" + row[2].strip() + \"]\")\n"
	    "' %s", tmpl);
	p = popen(cmd, "r");
	ASSERT_TRUE(p != NULL);
	if (p == NULL)
		goto done;
	while (fgets(line, sizeof(line), p) != NULL && i < m->n_nodes) {
		char want[512];

		line[strcspn(line, "\n")] = '\0';
		snprintf(want, sizeof(want), "[%s]",
		    m->nodes[i].name != NULL ? m->nodes[i].name : "");
		ASSERT_STR_EQ(want, line);
		i++;
	}
	ASSERT_INT_EQ(pclose(p), 0);
	ASSERT_INT_EQ(i, m->n_nodes);
done:
	unlink(tmpl);
	model_free(m);
	TEST_DONE();
}

/* The demo network, read by csvnet and, independently, by Python. */
static void
test_demo(void)
{
	char cmd[1024], line[256];
	struct model *m = NULL;
	struct err e = { 0 };
	double cap = 0, rate = 0, pycap = -1, pyrate = -1;
	long pn = -1, pl = -1, pd = -1;
	size_t len, i;
	char *text;
	FILE *p;
	int r;

	TEST_START("the demo network reads the same in csvnet and in Python");
	text = slurp(DEMO, &len);
	r = parse_guarded(text, len, &m, &e);
	if (r != 0)
		printf("# %s: %s\n", e.where, e.msg);
	ASSERT_INT_EQ(r, 0);
	free(text);
	if (m == NULL)
		goto done;
	for (i = 0; i < m->n_links; i++)
		cap += m->links[i].capacity_bps;
	for (i = 0; i < m->n_demands; i++)
		rate += m->demands[i].rate_bps;
	snprintf(cmd, sizeof(cmd), PYTHON " -c '"
	    "import csv\n"
	    "si = {\"k\": 1e3, \"M\": 1e6, \"G\": 1e9, \"T\": 1e12}\n"
	    "def bps(s):\n"
	    "    return float(s[:-1]) * si[s[-1]] if s[-1] in si "
	    "else float(s)\n"
	    "n = {\"node\": 0, \"link\": 0, \"demand\": 0}\n"
	    "cap = rate = 0.0\n"
	    "for row in csv.reader(open(\"" DEMO "\", newline=\"\")):\n"
	    "    if not row or row[0].startswith(\"#\"):\n"
	    "        continue\n"
	    "    n[row[0]] += 1\n"
	    "    if row[0] == \"link\":\n"
	    "        cap += bps(row[4])\n"
	    "    if row[0] == \"demand\":\n"
	    "        rate += bps(row[3])\n"
	    "print(n[\"node\"], n[\"link\"], n[\"demand\"], repr(cap), "
	    "repr(rate))\n"
	    "'");
	p = popen(cmd, "r");
	ASSERT_TRUE(p != NULL);
	if (p == NULL)
		goto done;
	if (fgets(line, sizeof(line), p) == NULL ||
	    sscanf(line, "%ld %ld %ld %lf %lf", &pn, &pl, &pd, &pycap,
	    &pyrate) != 5)
		TAP_FAIL("no answer from python: %s", line);
	pclose(p);
	ASSERT_INT_EQ(m->n_nodes, pn);
	ASSERT_INT_EQ(m->n_links, pl);
	ASSERT_INT_EQ(m->n_demands, pd);
	/* Sums in a different order: equal within rounding. */
	ASSERT_DBL_NEAR(cap, pycap, 1e-12);
	ASSERT_DBL_NEAR(rate, pyrate, 1e-12);
	/* The demo's README promises 16 sites and priorities 0..2. */
	ASSERT_INT_EQ(m->n_nodes, 16);
	for (i = 0; i < m->n_demands; i++)
		ASSERT_TRUE(m->demands[i].priority <= 2);
done:
	model_free(m);
	TEST_DONE();
}

/*
 * The first code block under "## Example" in docs/csv-format.md must read,
 * and its rows say: 4 nodes, 5 links (ALD-DUN down), 5 demands.
 */
static void
test_doc_example(void)
{
	struct model *m = NULL;
	struct err e = { 0 };
	char *doc, *start, *end;
	size_t len;
	long l;
	int r;

	TEST_START("the example in docs/csv-format.md reads as it says");
	doc = slurp("docs/csv-format.md", &len);
	start = strstr(doc, "## Example");
	start = start != NULL ? strstr(start, "```\n") : NULL;
	end = start != NULL ? strstr(start + 4, "```") : NULL;
	ASSERT_TRUE(end != NULL);
	if (end == NULL)
		goto done;
	start += 4;
	r = parse_guarded(start, (size_t)(end - start), &m, &e);
	if (r != 0)
		printf("# %s: %s\n", e.where, e.msg);
	ASSERT_INT_EQ(r, 0);
	if (m == NULL)
		goto done;
	ASSERT_INT_EQ(m->n_nodes, 4);
	ASSERT_INT_EQ(m->n_links, 5);
	ASSERT_INT_EQ(m->n_demands, 5);
	l = model_find_link(m, "ALD-DUN");
	ASSERT_TRUE(l >= 0 && !m->links[l].up);
	l = model_find_link(m, "CRB-VAR");
	ASSERT_TRUE(l >= 0 && m->links[l].capacity_bps == 10e9);
done:
	model_free(m);
	free(doc);
	TEST_DONE();
}

/* ---- writing ---- */

static bool
same_model(const struct model *a, const struct model *b)
{
	size_t i;

	if (a->n_nodes != b->n_nodes || a->n_links != b->n_links ||
	    a->n_demands != b->n_demands)
		return false;
	for (i = 0; i < a->n_nodes; i++) {
		const struct node *x = &a->nodes[i], *y = &b->nodes[i];

		if (strcmp(x->id, y->id) != 0 ||
		    x->has_coords != y->has_coords ||
		    (x->name == NULL) != (y->name == NULL) ||
		    (x->name != NULL && strcmp(x->name, y->name) != 0) ||
		    (x->has_coords && (x->lat != y->lat || x->lon != y->lon)))
			return false;
	}
	for (i = 0; i < a->n_links; i++) {
		const struct link *x = &a->links[i], *y = &b->links[i];

		if (strcmp(x->id, y->id) != 0 || x->a != y->a || x->b != y->b ||
		    x->capacity_bps != y->capacity_bps ||
		    x->te_metric != y->te_metric || x->up != y->up)
			return false;
	}
	for (i = 0; i < a->n_demands; i++) {
		const struct demand *x = &a->demands[i], *y = &b->demands[i];

		if (x->src != y->src || x->dst != y->dst ||
		    x->rate_bps != y->rate_bps || x->priority != y->priority)
			return false;
	}
	return true;
}

/* Writes m, reads it back, and compares exactly. */
static bool
round_trip(const struct model *m)
{
	struct model *back = NULL;
	struct err e = { 0 };
	char *buf = NULL;
	size_t len = 0;
	FILE *f;
	bool ok;

	f = open_memstream(&buf, &len);
	if (f == NULL || csvnet_write(m, f) != 0) {
		printf("# write failed\n");
		return false;
	}
	fclose(f);
	if (parse_guarded(buf, len, &back, &e) != 0) {
		printf("# %s: %s\n", e.where, e.msg);
		free(buf);
		return false;
	}
	ok = same_model(m, back);
	free(buf);
	model_free(back);
	return ok;
}

static void
test_round_trips(void)
{
	static const char *names[] = { "abilene", "atlanta", "brain",
	    "nobel-eu", "ta2" };
	char path[128], name[128];
	struct model *m = NULL;
	struct err e = { 0 };
	size_t i, len;
	char *text;

	for (i = 0; i < sizeof(names) / sizeof(names[0]); i++) {
		snprintf(name, sizeof(name), "writes %s and reads back the "
		    "same model, bit for bit", names[i]);
		TEST_START(name);
		snprintf(path, sizeof(path), "tests/data/sndlib/%s.txt",
		    names[i]);
		text = slurp(path, &len);
		m = NULL;
		ASSERT_INT_EQ(sndlib_parse(text, len, &m, &e), 0);
		if (m != NULL) {
			/* Give the writer odd values to carry too. */
			m->links[0].up = false;
			m->links[0].te_metric = 0.1;
			m->demands[0].priority = 7;
			m->demands[1].rate_bps = 1.0 / 3.0;
			ASSERT_TRUE(round_trip(m));
		}
		model_free(m);
		free(text);
		TEST_DONE();
	}

	TEST_START("writes names that need quoting and reads them back");
	m = NULL;
	ASSERT_INT_EQ(parse_guarded(sample, sizeof(sample) - 1, &m, &e), 0);
	if (m != NULL) {
		free(m->nodes[1].name);
		m->nodes[1].name = strdup(" #lead, and \"trail\" ");
		ASSERT_TRUE(round_trip(m));
	}
	model_free(m);
	TEST_DONE();
}

static void
test_write_error(void)
{
	struct model *m = NULL;
	struct err e = { 0 };
	FILE *f;

	TEST_START("reports ERR_IO when the output cannot be written");
	ASSERT_INT_EQ(parse_guarded(sample, sizeof(sample) - 1, &m, &e), 0);
	f = fopen("/dev/full", "w");
	ASSERT_TRUE(f != NULL);
	if (f != NULL && m != NULL) {
		ASSERT_INT_EQ(csvnet_write(m, f), ERR_IO);
		fclose(f);
	}
	model_free(m);
	TEST_DONE();
}

/* ---- bad input ---- */

#define NODES_AB	"node,a,,1,2\nnode,b\n"

static const struct {
	const char *what;
	const char *text;
	int line;
} bad[] = {
	{ "rejects an unknown kind of row", NODES_AB "nod,c\n", 3 },
	{ "rejects a link to an unknown node",
	  NODES_AB "link,l,a,x,1G\n", 3 },
	{ "rejects a demand from an unknown node",
	  NODES_AB "demand,x,b,1G\n", 3 },
	{ "rejects NaN as a capacity", NODES_AB "link,l,a,b,nan\n", 3 },
	{ "rejects inf as a rate", NODES_AB "demand,a,b,inf\n", 3 },
	{ "rejects a rate that overflows", NODES_AB "demand,a,b,1e308T\n",
	  3 },
	{ "rejects a negative rate", NODES_AB "demand,a,b,-1G\n", 3 },
	{ "rejects an unknown suffix", NODES_AB "demand,a,b,10X\n", 3 },
	{ "rejects a lower-case g suffix", NODES_AB "demand,a,b,10g\n", 3 },
	{ "rejects a bare suffix", NODES_AB "demand,a,b,G\n", 3 },
	{ "rejects a zero capacity", NODES_AB "link,l,a,b,0\n", 3 },
	{ "rejects a zero TE metric", NODES_AB "link,l,a,b,1G,0\n", 3 },
	{ "rejects a link with equal ends", NODES_AB "link,l,a,a,1G\n", 3 },
	{ "rejects a demand with equal ends", NODES_AB "demand,b,b,1G\n", 3 },
	{ "rejects a duplicate node id", NODES_AB "node,a\n", 3 },
	{ "rejects a duplicate link id",
	  NODES_AB "link,l,a,b,1G\nlink,l,b,a,1G\n", 4 },
	{ "rejects a quote left open", "node,\"a,,\nnode,b\n", 1 },
	{ "rejects a quote left open at the end", "node,\"a", 1 },
	{ "rejects text after a closing quote", "node,\"a\"b\n", 1 },
	{ "rejects a quote inside an unquoted field", "node,a\"b\n", 1 },
	{ "rejects a non-empty field past the kind's last",
	  "node,a,,1,2,x\n", 1 },
	{ "rejects a non-empty field far past the kind's last",
	  "node,a,,,,,,,,,,,x\n", 1 },
	{ "rejects lat without lon", "node,a,,1,\n", 1 },
	{ "rejects a latitude over 90", "node,a,,91,0\n", 1 },
	{ "rejects a priority over the maximum", NODES_AB "demand,a,b,1,8\n",
	  3 },
	{ "rejects a fractional priority", NODES_AB "demand,a,b,1,1.5\n", 3 },
	{ "rejects an unknown link state",
	  NODES_AB "link,l,a,b,1G,1,sideways\n", 3 },
	{ "rejects a link without capacity", NODES_AB "link,l,a,b\n", 3 },
	{ "rejects a demand without rate", NODES_AB "demand,a,b\n", 3 },
	{ "rejects a row without id", "node\n", 1 },
	{ "rejects a control character", "node,a,na\001me\n", 1 },
	{ "rejects a bare CR as a line end", "node,a\rnode,b\n", 1 },
	{ "rejects an error on the right line after a quoted field",
	  "node,\"a\",\"x, y\"\n\nnode,a\n", 3 },
};

static void
test_bad(void)
{
	char want[32];
	size_t i;

	for (i = 0; i < sizeof(bad) / sizeof(bad[0]); i++) {
		struct model *m = NULL;
		struct err e = { 0 };
		int r;

		TEST_START(bad[i].what);
		r = parse_guarded(bad[i].text, strlen(bad[i].text), &m, &e);
		ASSERT_INT_EQ(r, ERR_INVALID);
		ASSERT_TRUE(m == NULL);
		snprintf(want, sizeof(want), "line %d", bad[i].line);
		ASSERT_STR_EQ(e.where, want);
		printf("# %s: %s\n", e.where, e.msg);
		model_free(m);
		TEST_DONE();
	}
}

static void
test_limits(void)
{
	char text[2048], id[MODEL_ID_MAX + 2], name[CSVNET_NAME_MAX + 2];
	char big[700];
	struct model *m = NULL;
	struct err e = { 0 };
	int r;

	TEST_START("rejects an id one byte over MODEL_ID_MAX");
	memset(id, 'i', sizeof(id) - 1);
	id[MODEL_ID_MAX + 1] = '\0';
	snprintf(text, sizeof(text), "node,%s\n", id);
	ASSERT_INT_EQ(parse_guarded(text, strlen(text), &m, &e), ERR_INVALID);
	ASSERT_STR_EQ(e.where, "line 1");
	TEST_DONE();

	TEST_START("accepts an id of exactly MODEL_ID_MAX bytes");
	id[MODEL_ID_MAX] = '\0';
	snprintf(text, sizeof(text), "node,%s\nnode,b\nlink,%s,%s,b,1M\n", id,
	    id, id);
	r = parse_guarded(text, strlen(text), &m, &e);
	ASSERT_INT_EQ(r, 0);
	if (m != NULL)
		ASSERT_INT_EQ(strlen(m->links[0].id), MODEL_ID_MAX);
	model_free(m);
	m = NULL;
	TEST_DONE();

	TEST_START("rejects a name over CSVNET_NAME_MAX");
	memset(name, 'n', sizeof(name) - 1);
	name[CSVNET_NAME_MAX + 1] = '\0';
	snprintf(text, sizeof(text), "node,a,%s\n", name);
	ASSERT_INT_EQ(parse_guarded(text, strlen(text), &m, &e), ERR_INVALID);
	TEST_DONE();

	TEST_START("rejects a field longer than any value may be");
	memset(big, 'f', sizeof(big) - 1);
	big[sizeof(big) - 1] = '\0';
	snprintf(text, sizeof(text), "node,a,,,,,,,\"%s\"\n", big);
	ASSERT_INT_EQ(parse_guarded(text, strlen(text), &m, &e), ERR_INVALID);
	ASSERT_TRUE(strstr(e.msg, "longer") != NULL);
	TEST_DONE();

	TEST_START("rejects a NUL byte in an id");
	memcpy(text, "node,a\0b\n", 9);
	ASSERT_INT_EQ(parse_guarded(text, 9, &m, &e), ERR_INVALID);
	TEST_DONE();

	TEST_START("rejects a text without node rows");
	ASSERT_INT_EQ(parse_guarded("", 0, &m, &e), ERR_INVALID);
	ASSERT_STR_EQ(e.where, "line 1");
	ASSERT_INT_EQ(parse_guarded("# only\n,,,\n", 11, &m, &e),
	    ERR_INVALID);
	TEST_DONE();
}

/* Every prefix of the sample, before the guard page. */
static void
test_prefixes(void)
{
	size_t n, wrong = 0;

	TEST_START("every prefix of a CSV network parses or fails cleanly, "
	    "without reading past len");
	for (n = 0; n < sizeof(sample); n++) {
		struct model *m = NULL;
		struct err e = { 0 };
		int r = parse_guarded(sample, n, &m, &e);

		if (r == 0 ? m == NULL : r != ERR_INVALID || m != NULL)
			wrong++;
		model_free(m);
	}
	ASSERT_INT_EQ(wrong, 0);
	TEST_DONE();
}

int
main(void)
{
	test_sample();
	test_python_quoting();
	test_demo();
	test_doc_example();
	test_round_trips();
	test_write_error();
	test_bad();
	test_limits();
	test_prefixes();
	return tap_finish();
}
