/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Unit tests for the SQLite store: round trips, revisions, refusals, files. */

/*
 * Each case uses fresh database files in a temporary directory under /tmp,
 * removed at the end.  What the store says is checked two ways: through
 * storage's own load calls, and through the sqlite3 command-line shell
 * (/usr/bin/sqlite3), a separate program that reads the same file, for
 * what is on disk (rows and their order, pragmas, integrity).  Expected
 * values (revisions, counts, sums) are worked out by hand beside each check.
 */

#include <sys/stat.h>

#include <dirent.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include "../../tap.h"
#include "dbtest.h"
#include "../../../storage/db.h"
#include "../../../storage/schema.h"
#include "../../../daemon/base/err.h"
#include "../../../daemon/base/xalloc.h"
#include "../../../daemon/engine/model.h"

/*
 * A fictional four-site network.  Nodes are out of alphabetical order and
 * links out of id order, so a store that sorted by id would fail the order
 * checks.
 */
static struct model *
topo_four(void)
{
	struct model *m = model_new();
	size_t i;

	model_add_node(m, "zeta", "Zeta Hall", &i, "nodes", NULL);
	m->nodes[i].lat = 59.25;
	m->nodes[i].lon = 18.125;
	m->nodes[i].has_coords = true;
	model_add_node(m, "alder", NULL, &i, "nodes", NULL);
	model_add_node(m, "mire", "Mire Cross", &i, "nodes", NULL);
	m->nodes[i].lat = -33.5;
	m->nodes[i].lon = -70.75;
	m->nodes[i].has_coords = true;
	model_add_node(m, "birch", "Birch Yard", &i, "nodes", NULL);
	model_add_link(m, "l-zm", "zeta", "mire", 10e9, 10, true, "links",
	    NULL);
	model_add_link(m, "l-ab", "alder", "birch", 1e9, 5, false, "links",
	    NULL);
	model_add_link(m, "l-ma", "mire", "alder", 40e9, 1, true, "links",
	    NULL);
	return m;
}

/* The same sites without "mire", and one link. */
static struct model *
topo_three(void)
{
	struct model *m = model_new();

	model_add_node(m, "zeta", "Zeta Hall", NULL, "nodes", NULL);
	model_add_node(m, "alder", NULL, NULL, "nodes", NULL);
	model_add_node(m, "birch", "Birch Yard", NULL, "nodes", NULL);
	model_add_link(m, "l-ab", "alder", "birch", 1e9, 5, true, "links",
	    NULL);
	return m;
}

/* Total rate by hand: 3e9 + 0.5e9 + 1e9 + 0.25e9 = 4.75e9 bit/s. */
static struct matrix *
matrix_day(void)
{
	struct matrix *mx = matrix_new("day");

	matrix_add(mx, "mire", "zeta", 3e9, 0);
	matrix_add(mx, "alder", "birch", 0.5e9, 3);
	matrix_add(mx, "zeta", "alder", 1e9, 1);
	matrix_add(mx, "birch", "mire", 0.25e9, 7);
	return mx;
}

/* Checks that link b is in the SRLGs of a, both ascending. */
static void
assert_same_srlgs(const struct link *b, const struct link *a)
{
	size_t k;

	ASSERT_INT_EQ(b->n_srlgs, a->n_srlgs);
	for (k = 0; k < a->n_srlgs && k < b->n_srlgs; k++)
		ASSERT_INT_EQ(b->srlgs[k], a->srlgs[k]);
}

/* Sets link i of m to the n SRLGs in s. */
static void
set_srlgs(struct model *m, size_t i, const uint32_t *s, size_t n)
{
	if (model_set_link_srlgs(m, i, s, n, "links", NULL) != 0)
		abort();
}

/* Checks b against a field by field, in order. */
static void
assert_same_topology(const struct model *a, const struct model *b)
{
	size_t i;

	ASSERT_INT_EQ(b->n_nodes, a->n_nodes);
	ASSERT_INT_EQ(b->n_links, a->n_links);
	if (a->n_nodes != b->n_nodes || a->n_links != b->n_links)
		return;
	for (i = 0; i < a->n_nodes; i++) {
		ASSERT_STR_EQ(b->nodes[i].id, a->nodes[i].id);
		ASSERT_TRUE((a->nodes[i].name == NULL) ==
		    (b->nodes[i].name == NULL));
		if (a->nodes[i].name != NULL)
			ASSERT_STR_EQ(b->nodes[i].name, a->nodes[i].name);
		ASSERT_INT_EQ(b->nodes[i].has_coords, a->nodes[i].has_coords);
		if (a->nodes[i].has_coords) {
			ASSERT_DBL_NEAR(b->nodes[i].lat, a->nodes[i].lat, 0);
			ASSERT_DBL_NEAR(b->nodes[i].lon, a->nodes[i].lon, 0);
		}
	}
	for (i = 0; i < a->n_links; i++) {
		ASSERT_STR_EQ(b->links[i].id, a->links[i].id);
		ASSERT_INT_EQ(b->links[i].a, a->links[i].a);
		ASSERT_INT_EQ(b->links[i].b, a->links[i].b);
		ASSERT_DBL_NEAR(b->links[i].capacity_bps,
		    a->links[i].capacity_bps, 0);
		ASSERT_DBL_NEAR(b->links[i].te_metric, a->links[i].te_metric,
		    0);
		ASSERT_INT_EQ(b->links[i].up, a->links[i].up);
		assert_same_srlgs(&b->links[i], &a->links[i]);
	}
}

static int64_t
revision(struct db *db)
{
	int64_t rev = -1;

	if (db_revision(db, &rev, NULL) != 0)
		return -1;
	return rev;
}

/* Opens a new database holding topo_four (rev 1) and matrix day (rev 2). */
static struct db *
open_stocked(char *path, size_t len)
{
	struct model *topo = topo_four();
	struct matrix *mx = matrix_day();
	struct db *db = NULL;
	int64_t rev;

	new_path(path, len);
	if (db_open(path, &db, NULL) != 0 ||
	    db_put_topology(db, topo, &rev, NULL) != 0 ||
	    db_put_matrix(db, "day", mx, &rev, NULL) != 0) {
		db_close(db);
		db = NULL;
	}
	model_free(topo);
	matrix_free(mx);
	return db;
}

/* ---- files, pragmas, migrations ---- */

static void
test_new_file(void)
{
	char path[128], want[32];
	struct db *db = NULL;
	struct err e = { 0 };

	TEST_START("creates a new database in WAL mode at the newest schema");
	new_path(path, sizeof(path));
	ASSERT_INT_EQ(db_open(path, &db, &e), 0);
	ASSERT_INT_EQ(revision(db), 0);
	ASSERT_SHELL(path, "PRAGMA journal_mode;", "wal");
	/* One migration file per schema version: storage/schema/NNN_*.sql. */
	snprintf(want, sizeof(want), "%zu", schema_migrations_n);
	ASSERT_SHELL(path, "PRAGMA user_version;", want);
	ASSERT_SHELL(path, "SELECT group_concat(name, ' ') FROM (SELECT name "
	    "FROM sqlite_master WHERE type = 'table' ORDER BY name);",
	    "audit demands link_srlg links matrices meta nodes plan_history "
	    "policy sqlite_sequence sweep_results sweeps tokens");
	ASSERT_SHELL(path, "PRAGMA integrity_check;", "ok");
	db_close(db);
	TEST_DONE();
}

static void
test_empty_file(void)
{
	char path[128], want[32];
	struct db *db = NULL;
	struct err e = { 0 };
	struct stat sb;
	FILE *f;

	TEST_START("migrates an existing empty file");
	new_path(path, sizeof(path));
	f = fopen(path, "w");
	ASSERT_TRUE(f != NULL);
	if (f != NULL)
		fclose(f);
	ASSERT_INT_EQ(stat(path, &sb), 0);
	ASSERT_INT_EQ(sb.st_size, 0);
	ASSERT_INT_EQ(db_open(path, &db, &e), 0);
	ASSERT_INT_EQ(revision(db), 0);
	snprintf(want, sizeof(want), "%zu", schema_migrations_n);
	ASSERT_SHELL(path, "PRAGMA user_version;", want);
	ASSERT_SHELL(path, "SELECT value FROM meta "
	    "WHERE key = 'model_revision';", "0");
	db_close(db);
	TEST_DONE();
}

static void
test_not_a_database(void)
{
	char path[128];
	struct db *db = NULL;
	struct err e = { 0 };
	FILE *f;
	int i;

	TEST_START("refuses a file that is not a database");
	new_path(path, sizeof(path));
	f = fopen(path, "w");
	ASSERT_TRUE(f != NULL);
	if (f != NULL) {
		for (i = 0; i < 64; i++)
			fputs("these are not the pages of a database\n", f);
		fclose(f);
	}
	ASSERT_INT_EQ(db_open(path, &db, &e), ERR_DB);
	ASSERT_TRUE(db == NULL);
	ASSERT_TRUE(strstr(e.msg, "not a weft database") != NULL);
	TEST_DONE();
}

static void
test_newer_schema(void)
{
	char path[128];
	struct db *db = NULL;
	struct err e = { 0 };
	char *out;

	TEST_START("refuses a database from a newer schema");
	new_path(path, sizeof(path));
	ASSERT_INT_EQ(db_open(path, &db, &e), 0);
	db_close(db);
	db = NULL;
	out = shell(path, "PRAGMA user_version = 999;");
	free(out);
	ASSERT_INT_EQ(db_open(path, &db, &e), ERR_DB);
	ASSERT_TRUE(db == NULL);
	ASSERT_TRUE(strstr(e.msg, "999") != NULL);
	TEST_DONE();
}

static void
test_missing_dir(void)
{
	char path[192];
	struct db *db = NULL;
	struct err e = { 0 };

	TEST_START("reports an I/O error for a directory that does not exist");
	snprintf(path, sizeof(path), "%s/no/such/dir/x.db", tmpdir);
	ASSERT_INT_EQ(db_open(path, &db, &e), ERR_IO);
	ASSERT_TRUE(db == NULL);
	TEST_DONE();
}

/* ---- round trips ---- */

static void
test_round_trip(void)
{
	struct model *topo = topo_four(), *m = NULL;
	struct matrix *mx = matrix_day(), *got = NULL;
	struct policy p;
	struct db_name *names = NULL;
	struct db *db = NULL;
	struct err e = { 0 };
	char path[128];
	int64_t rev;
	size_t i, n = 0;

	TEST_START("round-trips topology, matrix and policy in given order");
	new_path(path, sizeof(path));
	ASSERT_INT_EQ(db_open(path, &db, &e), 0);
	ASSERT_INT_EQ(db_put_topology(db, topo, &rev, &e), 0);
	ASSERT_INT_EQ(rev, 1);
	ASSERT_INT_EQ(db_put_matrix(db, "day", mx, &rev, &e), 0);
	ASSERT_INT_EQ(rev, 2);
	policy_default(&p);
	p.objective = OBJ_BALANCE;
	p.headroom = 0.8;
	p.matrix = "day";
	p.balance_tol = 1e-4;
	ASSERT_INT_EQ(db_put_policy(db, &p, &rev, &e), 0);
	ASSERT_INT_EQ(rev, 3);

	/* On disk, in the order given. */
	ASSERT_SHELL(path, "SELECT group_concat(id) FROM (SELECT id FROM nodes "
	    "ORDER BY ordinal);", "zeta,alder,mire,birch");
	ASSERT_SHELL(path, "SELECT group_concat(id || ':' || a || '-' || b) "
	    "FROM (SELECT * FROM links ORDER BY ordinal);",
	    "l-zm:zeta-mire,l-ab:alder-birch,l-ma:mire-alder");
	ASSERT_SHELL(path, "SELECT group_concat(src || '>' || dst) FROM "
	    "(SELECT * FROM demands WHERE matrix = 'day' ORDER BY ordinal);",
	    "mire>zeta,alder>birch,zeta>alder,birch>mire");
	ASSERT_SHELL(path, "SELECT objective, headroom, matrix FROM policy;",
	    "balance|0.8|day");
	ASSERT_SHELL(path, "SELECT updated_revision FROM matrices "
	    "WHERE name = 'day';", "2");

	ASSERT_INT_EQ(db_load_model(db, &m, &e), 0);
	ASSERT_TRUE(m != NULL);
	if (m != NULL) {
		assert_same_topology(topo, m);
		ASSERT_INT_EQ(m->revision, 3);
		ASSERT_INT_EQ(m->policy.objective, OBJ_BALANCE);
		ASSERT_DBL_NEAR(m->policy.headroom, 0.8, 0);
		ASSERT_DBL_NEAR(m->policy.balance_tol, 1e-4, 0);
		ASSERT_STR_EQ(m->policy.matrix, "day");
		/* Demands resolved to indices of topo_four's node order:
		   zeta 0, alder 1, mire 2, birch 3. */
		ASSERT_INT_EQ(m->n_demands, 4);
		if (m->n_demands == 4) {
			ASSERT_INT_EQ(m->demands[0].src, 2);
			ASSERT_INT_EQ(m->demands[0].dst, 0);
			ASSERT_INT_EQ(m->demands[1].src, 1);
			ASSERT_INT_EQ(m->demands[1].dst, 3);
			ASSERT_INT_EQ(m->demands[2].src, 0);
			ASSERT_INT_EQ(m->demands[2].dst, 1);
			ASSERT_INT_EQ(m->demands[3].src, 3);
			ASSERT_INT_EQ(m->demands[3].dst, 2);
			ASSERT_DBL_NEAR(m->demands[3].rate_bps, 0.25e9, 0);
			ASSERT_INT_EQ(m->demands[3].priority, 7);
		}
	}
	model_free(m);
	m = NULL;

	ASSERT_INT_EQ(db_load_topology(db, &m, &e), 0);
	if (m != NULL) {
		assert_same_topology(topo, m);
		ASSERT_INT_EQ(m->n_demands, 0);
		ASSERT_STR_EQ(m->policy.matrix, "day");
	}
	model_free(m);

	ASSERT_INT_EQ(db_load_matrix(db, "day", &got, &e), 0);
	ASSERT_TRUE(got != NULL);
	if (got != NULL) {
		ASSERT_INT_EQ(got->n, mx->n);
		for (i = 0; i < got->n && i < mx->n; i++) {
			ASSERT_STR_EQ(got->entries[i].src, mx->entries[i].src);
			ASSERT_STR_EQ(got->entries[i].dst, mx->entries[i].dst);
			ASSERT_DBL_NEAR(got->entries[i].rate_bps,
			    mx->entries[i].rate_bps, 0);
			ASSERT_INT_EQ(got->entries[i].priority,
			    mx->entries[i].priority);
		}
	}
	matrix_free(got);

	ASSERT_INT_EQ(db_list_matrices(db, &names, &n, &e), 0);
	ASSERT_INT_EQ(n, 1);
	if (n == 1) {
		ASSERT_STR_EQ(names[0].name, "day");
		ASSERT_INT_EQ(names[0].n_demands, 4);
		ASSERT_DBL_NEAR(names[0].total_bps, 4.75e9, 1e-12);
	}
	db_names_free(names, n);
	ASSERT_INT_EQ(e.code, 0);
	model_free(topo);
	matrix_free(mx);
	db_close(db);
	TEST_DONE();
}

static void
test_default_policy(void)
{
	struct model *m = NULL;
	struct policy def;
	struct db *db = NULL;
	struct err e = { 0 };
	char path[128];

	TEST_START("loads the default policy and no demands when none stored");
	db = open_stocked(path, sizeof(path));
	ASSERT_TRUE(db != NULL);
	policy_default(&def);
	ASSERT_INT_EQ(db_load_model(db, &m, &e), 0);
	if (m != NULL) {
		ASSERT_INT_EQ(m->policy.objective, def.objective);
		ASSERT_DBL_NEAR(m->policy.headroom, def.headroom, 0);
		ASSERT_DBL_NEAR(m->policy.balance_tol, def.balance_tol, 0);
		ASSERT_TRUE(m->policy.matrix == NULL);
		/* "day" is stored but no policy names it. */
		ASSERT_INT_EQ(m->n_demands, 0);
		ASSERT_INT_EQ(m->revision, 2);
	}
	model_free(m);
	db_close(db);
	TEST_DONE();
}

static void
test_policy_missing_matrix(void)
{
	struct model *m = NULL;
	struct policy p;
	struct db *db = NULL;
	struct err e = { 0 };
	char path[128];
	int64_t rev;

	TEST_START("stores a policy naming an absent matrix; plans no demands");
	db = open_stocked(path, sizeof(path));
	ASSERT_TRUE(db != NULL);
	policy_default(&p);
	p.matrix = "evening";
	ASSERT_INT_EQ(db_put_policy(db, &p, &rev, &e), 0);
	ASSERT_INT_EQ(rev, 3);
	ASSERT_INT_EQ(db_load_model(db, &m, &e), 0);
	if (m != NULL) {
		ASSERT_STR_EQ(m->policy.matrix, "evening");
		ASSERT_INT_EQ(m->n_demands, 0);
	}
	model_free(m);
	db_close(db);
	TEST_DONE();
}

/* ---- revisions and refusals ---- */

static void
test_revision_counting(void)
{
	struct model *topo = topo_four();
	struct matrix *mx = matrix_day();
	struct link_patch lp = { .has_up = true, .up = false };
	struct policy p;
	struct db *db = NULL;
	struct err e = { 0 };
	char path[128];
	int64_t rev;

	TEST_START("adds exactly one revision per write, none per failed one");
	new_path(path, sizeof(path));
	ASSERT_INT_EQ(db_open(path, &db, &e), 0);
	ASSERT_INT_EQ(revision(db), 0);
	ASSERT_INT_EQ(db_put_topology(db, topo, &rev, &e), 0);
	ASSERT_INT_EQ(rev, 1);
	ASSERT_INT_EQ(db_put_matrix(db, "day", mx, &rev, &e), 0);
	ASSERT_INT_EQ(rev, 2);
	ASSERT_INT_EQ(db_put_matrix(db, "day", mx, &rev, &e), 0);
	ASSERT_INT_EQ(rev, 3);
	policy_default(&p);
	ASSERT_INT_EQ(db_put_policy(db, &p, &rev, &e), 0);
	ASSERT_INT_EQ(rev, 4);
	ASSERT_INT_EQ(db_patch_link(db, "l-zm", &lp, &rev, &e), 0);
	ASSERT_INT_EQ(rev, 5);
	ASSERT_INT_EQ(revision(db), 5);

	/* Failed writes: each leaves the revision at 5. */
	ASSERT_INT_EQ(db_patch_link(db, "l-none", &lp, &rev, NULL),
	    ERR_NOTFOUND);
	ASSERT_INT_EQ(db_delete_matrix(db, "night", &rev, NULL),
	    ERR_NOTFOUND);
	p.headroom = 1.5;
	ASSERT_INT_EQ(db_put_policy(db, &p, &rev, NULL), ERR_INVALID);
	matrix_add(mx, "zeta", "nowhere", 1, 0);
	ASSERT_INT_EQ(db_put_matrix(db, "day", mx, &rev, NULL), ERR_INVALID);
	ASSERT_INT_EQ(rev, 0);
	ASSERT_INT_EQ(revision(db), 5);
	ASSERT_SHELL(path, "SELECT value FROM meta "
	    "WHERE key = 'model_revision';", "5");

	/* A plan record is not a model change. */
	ASSERT_INT_EQ(db_record_plan(db, 1, 5, "{}", 10, &e), 0);
	ASSERT_INT_EQ(revision(db), 5);
	ASSERT_INT_EQ(db_delete_matrix(db, "day", &rev, &e), 0);
	ASSERT_INT_EQ(rev, 6);
	ASSERT_INT_EQ(e.code, 0);
	model_free(topo);
	matrix_free(mx);
	db_close(db);
	TEST_DONE();
}

static void
test_unknown_node(void)
{
	struct matrix *mx;
	struct db *db = NULL;
	struct err e = { 0 };
	char path[128];
	int64_t rev = 99;

	TEST_START("rejects a matrix naming an unknown node; nothing changes");
	db = open_stocked(path, sizeof(path));
	ASSERT_TRUE(db != NULL);
	mx = matrix_new("night");
	matrix_add(mx, "zeta", "mire", 1e6, 0);
	matrix_add(mx, "alder", "quarry", 1e6, 0);
	ASSERT_INT_EQ(db_put_matrix(db, "night", mx, &rev, &e), ERR_INVALID);
	ASSERT_STR_EQ(e.where, "demands[1].dst");
	ASSERT_TRUE(strstr(e.msg, "quarry") != NULL);
	ASSERT_INT_EQ(rev, 0);
	ASSERT_INT_EQ(revision(db), 2);
	ASSERT_SHELL(path, "SELECT count(*) FROM matrices;", "1");
	ASSERT_SHELL(path, "SELECT count(*) FROM demands;", "4");
	matrix_free(mx);

	/* An unknown source, on a matrix that exists: it keeps its rows. */
	err_clear(&e);
	mx = matrix_new("day");
	matrix_add(mx, "quarry", "zeta", 1e6, 0);
	ASSERT_INT_EQ(db_put_matrix(db, "day", mx, &rev, &e), ERR_INVALID);
	ASSERT_STR_EQ(e.where, "demands[0].src");
	ASSERT_SHELL(path, "SELECT group_concat(src || '>' || dst) FROM "
	    "(SELECT * FROM demands WHERE matrix = 'day' ORDER BY ordinal);",
	    "mire>zeta,alder>birch,zeta>alder,birch>mire");
	ASSERT_INT_EQ(revision(db), 2);
	matrix_free(mx);
	db_close(db);
	TEST_DONE();
}

/*
 * "day" (matrix_day()) against topo_three(), which lacks "mire":
 *   mire>zeta   3e9    p0  names mire: unplaced
 *   alder>birch 0.5e9  p3  placed
 *   zeta>alder  1e9    p1  placed
 *   birch>mire  0.25e9 p7  names mire: unplaced
 * so 2 demands placed, 2 unplaced with 3e9 + 0.25e9 = 3.25e9 bit/s.  The
 * sum is also asked of the sqlite3 shell, which reads the file directly.
 */
static void
test_topology_keeps_matrices(void)
{
	struct model *three = topo_three(), *four = topo_four();
	struct model *m = NULL, *c = NULL;
	struct matrix *mx = NULL;
	struct policy p;
	struct db *db = NULL;
	struct err e = { 0 };
	char path[128];
	int64_t rev = 99;

	TEST_START("a topology dropping a node a stored matrix uses is stored; "
	    "the matrix is kept whole");
	db = open_stocked(path, sizeof(path));
	ASSERT_TRUE(db != NULL);
	ASSERT_INT_EQ(db_put_topology(db, three, &rev, &e), 0);
	ASSERT_INT_EQ(rev, 3);
	ASSERT_SHELL(path, "SELECT group_concat(id) FROM (SELECT id FROM nodes "
	    "ORDER BY ordinal);", "zeta,alder,birch");
	ASSERT_SHELL(path, "SELECT count(*) FROM links;", "1");
	/* "day" is untouched: rows, order, rates and its revision. */
	ASSERT_SHELL(path, "SELECT group_concat(src || '>' || dst || '@' || "
	    "priority || '=' || rate_bps) FROM (SELECT * FROM demands "
	    "WHERE matrix = 'day' ORDER BY ordinal);",
	    "mire>zeta@0=3000000000.0,alder>birch@3=500000000.0,"
	    "zeta>alder@1=1000000000.0,birch>mire@7=250000000.0");
	ASSERT_SHELL(path, "SELECT updated_revision FROM matrices "
	    "WHERE name = 'day';", "2");
	ASSERT_SHELL(path, "SELECT count(*), sum(rate_bps) FROM demands "
	    "WHERE matrix = 'day' AND (src NOT IN (SELECT id FROM nodes) OR "
	    "dst NOT IN (SELECT id FROM nodes));", "2|3250000000.0");
	ASSERT_SHELL(path, "PRAGMA foreign_key_check;", "");
	ASSERT_INT_EQ(db_load_matrix(db, "day", &mx, &e), 0);
	if (mx != NULL) {
		ASSERT_INT_EQ(mx->n, 4);
		if (mx->n == 4) {
			ASSERT_STR_EQ(mx->entries[0].src, "mire");
			ASSERT_STR_EQ(mx->entries[3].dst, "mire");
			ASSERT_DBL_NEAR(mx->entries[3].rate_bps, 0.25e9, 0);
			ASSERT_INT_EQ(mx->entries[3].priority, 7);
		}
	}
	matrix_free(mx);
	mx = NULL;

	/* A new matrix is still checked against the topology now stored. */
	err_clear(&e);
	mx = matrix_new("night");
	matrix_add(mx, "mire", "birch", 1e6, 0);
	ASSERT_INT_EQ(db_put_matrix(db, "night", mx, &rev, &e), ERR_INVALID);
	ASSERT_STR_EQ(e.where, "demands[0].src");
	ASSERT_INT_EQ(revision(db), 3);
	matrix_free(mx);
	mx = NULL;

	/* The snapshot plans the two demands it can place, counts the rest. */
	err_clear(&e);
	policy_default(&p);
	p.matrix = "day";
	ASSERT_INT_EQ(db_put_policy(db, &p, &rev, &e), 0);
	ASSERT_INT_EQ(rev, 4);
	ASSERT_INT_EQ(db_load_model(db, &m, &e), 0);
	if (m != NULL) {
		ASSERT_INT_EQ(m->revision, 4);
		ASSERT_INT_EQ(m->n_nodes, 3);
		ASSERT_INT_EQ(m->n_demands, 2);
		ASSERT_INT_EQ(m->n_unplaced, 2);
		ASSERT_DBL_NEAR(m->unplaced_bps, 3.25e9, 0);
		if (m->n_demands == 2) {
			/* zeta 0, alder 1, birch 2; "day" order kept. */
			ASSERT_INT_EQ(m->demands[0].src, 1);
			ASSERT_INT_EQ(m->demands[0].dst, 2);
			ASSERT_DBL_NEAR(m->demands[0].rate_bps, 0.5e9, 0);
			ASSERT_INT_EQ(m->demands[0].priority, 3);
			ASSERT_INT_EQ(m->demands[1].src, 0);
			ASSERT_INT_EQ(m->demands[1].dst, 1);
			ASSERT_DBL_NEAR(m->demands[1].rate_bps, 1e9, 0);
			ASSERT_INT_EQ(m->demands[1].priority, 1);
		}
		c = model_copy(m);
		ASSERT_INT_EQ(c->n_unplaced, 2);
		ASSERT_DBL_NEAR(c->unplaced_bps, 3.25e9, 0);
		model_free(c);
	}
	model_free(m);
	m = NULL;

	/* With "mire" back, all four demands are planned again. */
	ASSERT_INT_EQ(db_put_topology(db, four, &rev, &e), 0);
	ASSERT_INT_EQ(rev, 5);
	ASSERT_INT_EQ(db_load_model(db, &m, &e), 0);
	if (m != NULL) {
		ASSERT_INT_EQ(m->n_demands, 4);
		ASSERT_INT_EQ(m->n_unplaced, 0);
		ASSERT_DBL_NEAR(m->unplaced_bps, 0, 0);
	}
	model_free(m);
	model_free(three);
	model_free(four);
	db_close(db);
	TEST_DONE();
}

static void
test_topology_invalid(void)
{
	struct model *topo = topo_four();
	struct db *db = NULL;
	struct err e = { 0 };
	char path[128];
	int64_t rev;

	TEST_START("rejects a topology with a duplicate id or zero capacity");
	db = open_stocked(path, sizeof(path));
	ASSERT_TRUE(db != NULL);
	/* The model refuses both, so break a built one by hand. */
	free(topo->nodes[3].id);
	topo->nodes[3].id = xstrdup("zeta");
	ASSERT_INT_EQ(db_put_topology(db, topo, &rev, &e), ERR_INVALID);
	ASSERT_STR_EQ(e.where, "nodes[3].id");
	free(topo->nodes[3].id);
	topo->nodes[3].id = xstrdup("birch");
	topo->links[2].capacity_bps = 0;
	err_clear(&e);
	ASSERT_INT_EQ(db_put_topology(db, topo, &rev, &e), ERR_INVALID);
	ASSERT_STR_EQ(e.where, "links[2].capacity_bps");
	ASSERT_INT_EQ(revision(db), 2);
	ASSERT_SHELL(path, "SELECT group_concat(capacity_bps) FROM (SELECT "
	    "capacity_bps FROM links ORDER BY ordinal);",
	    "10000000000.0,1000000000.0,40000000000.0");
	model_free(topo);
	db_close(db);
	TEST_DONE();
}

static void
test_patch_link(void)
{
	struct link_patch lp;
	struct model *m = NULL;
	struct db *db = NULL;
	struct err e = { 0 };
	char path[128];
	int64_t rev;

	TEST_START("patches a link's state, capacity and metric");
	db = open_stocked(path, sizeof(path));
	ASSERT_TRUE(db != NULL);
	memset(&lp, 0, sizeof(lp));
	lp.has_up = true;
	lp.up = false;
	ASSERT_INT_EQ(db_patch_link(db, "l-ma", &lp, &rev, &e), 0);
	ASSERT_INT_EQ(rev, 3);
	ASSERT_SHELL(path, "SELECT up, capacity_bps, te_metric FROM links "
	    "WHERE id = 'l-ma';", "0|40000000000.0|1.0");
	memset(&lp, 0, sizeof(lp));
	lp.has_capacity = true;
	lp.capacity_bps = 100e9;
	ASSERT_INT_EQ(db_patch_link(db, "l-ma", &lp, &rev, &e), 0);
	ASSERT_INT_EQ(rev, 4);
	memset(&lp, 0, sizeof(lp));
	lp.has_metric = true;
	lp.te_metric = 7.5;
	lp.has_up = true;
	lp.up = true;
	ASSERT_INT_EQ(db_patch_link(db, "l-ma", &lp, &rev, &e), 0);
	ASSERT_INT_EQ(rev, 5);
	ASSERT_SHELL(path, "SELECT up, capacity_bps, te_metric FROM links "
	    "WHERE id = 'l-ma';", "1|100000000000.0|7.5");
	/* The other links are untouched. */
	ASSERT_SHELL(path, "SELECT group_concat(up || '/' || te_metric) FROM "
	    "(SELECT * FROM links WHERE id <> 'l-ma' ORDER BY ordinal);",
	    "1/10.0,0/5.0");
	ASSERT_INT_EQ(db_load_model(db, &m, &e), 0);
	if (m != NULL && m->n_links == 3) {
		ASSERT_STR_EQ(m->links[2].id, "l-ma");
		ASSERT_INT_EQ(m->links[2].up, 1);
		ASSERT_DBL_NEAR(m->links[2].capacity_bps, 100e9, 0);
		ASSERT_DBL_NEAR(m->links[2].te_metric, 7.5, 0);
		ASSERT_INT_EQ(m->revision, 5);
	}
	model_free(m);

	/* A bad value is refused before anything is written. */
	memset(&lp, 0, sizeof(lp));
	lp.has_capacity = true;
	lp.capacity_bps = -1;
	ASSERT_INT_EQ(db_patch_link(db, "l-ma", &lp, &rev, &e), ERR_INVALID);
	ASSERT_STR_EQ(e.where, "capacity_bps");
	ASSERT_INT_EQ(revision(db), 5);
	db_close(db);
	TEST_DONE();
}

static void
test_unknown_link(void)
{
	struct link_patch lp = { .has_up = true, .up = false };
	struct db *db = NULL;
	struct err e = { 0 };
	char path[128];
	int64_t rev = 99;

	TEST_START("patching an unknown link is not found");
	db = open_stocked(path, sizeof(path));
	ASSERT_TRUE(db != NULL);
	ASSERT_INT_EQ(db_patch_link(db, "l-xx", &lp, &rev, &e), ERR_NOTFOUND);
	ASSERT_STR_EQ(e.where, "id");
	ASSERT_TRUE(strstr(e.msg, "l-xx") != NULL);
	ASSERT_INT_EQ(rev, 0);
	ASSERT_INT_EQ(revision(db), 2);
	ASSERT_SHELL(path, "SELECT sum(up) FROM links;", "2");
	db_close(db);
	TEST_DONE();
}

static void
test_delete_matrix(void)
{
	struct matrix *mx = NULL;
	struct db_name *names = NULL;
	struct db *db = NULL;
	struct err e = { 0 };
	char path[128];
	int64_t rev;
	size_t n = 0;

	TEST_START("deleting a matrix deletes its demands");
	db = open_stocked(path, sizeof(path));
	ASSERT_TRUE(db != NULL);
	ASSERT_SHELL(path, "SELECT count(*) FROM demands "
	    "WHERE matrix = 'day';", "4");
	ASSERT_INT_EQ(db_delete_matrix(db, "day", &rev, &e), 0);
	ASSERT_INT_EQ(rev, 3);
	ASSERT_SHELL(path, "SELECT count(*) FROM demands;", "0");
	ASSERT_SHELL(path, "SELECT count(*) FROM matrices;", "0");
	ASSERT_INT_EQ(db_load_matrix(db, "day", &mx, &e), ERR_NOTFOUND);
	ASSERT_TRUE(mx == NULL);
	ASSERT_STR_EQ(e.where, "name");
	err_clear(&e);
	ASSERT_INT_EQ(db_delete_matrix(db, "day", &rev, &e), ERR_NOTFOUND);
	ASSERT_INT_EQ(revision(db), 3);
	ASSERT_INT_EQ(db_list_matrices(db, &names, &n, NULL), 0);
	ASSERT_INT_EQ(n, 0);
	db_names_free(names, n);
	db_close(db);
	TEST_DONE();
}

static void
test_names(void)
{
	struct matrix *mx = matrix_day();
	struct db *db = NULL;
	struct err e = { 0 };
	char path[128], name[MODEL_ID_MAX + 2];
	int64_t rev;

	TEST_START("rejects empty and over-long matrix names");
	db = open_stocked(path, sizeof(path));
	ASSERT_TRUE(db != NULL);
	ASSERT_INT_EQ(db_put_matrix(db, "", mx, &rev, &e), ERR_INVALID);
	ASSERT_STR_EQ(e.where, "name");
	/* 128 bytes is the longest name (MODEL_ID_MAX); 129 is one too
	   many. */
	memset(name, 'n', MODEL_ID_MAX + 1);
	name[MODEL_ID_MAX + 1] = '\0';
	err_clear(&e);
	ASSERT_INT_EQ(db_put_matrix(db, name, mx, &rev, &e), ERR_INVALID);
	ASSERT_STR_EQ(e.where, "name");
	ASSERT_INT_EQ(db_delete_matrix(db, name, &rev, NULL), ERR_INVALID);
	ASSERT_INT_EQ(revision(db), 2);
	name[MODEL_ID_MAX] = '\0';
	ASSERT_INT_EQ(db_put_matrix(db, name, mx, &rev, &e), 0);
	ASSERT_INT_EQ(rev, 3);
	matrix_free(mx);
	db_close(db);
	TEST_DONE();
}

static void
test_put_network(void)
{
	struct model *net = topo_three(), *m = NULL;
	struct matrix *night = matrix_new("night");
	struct policy p;
	struct db *db = NULL;
	struct err e = { 0 };
	char path[128];
	int64_t rev = 99;

	TEST_START("put_network replaces topology and one matrix, keeps the "
	    "others");
	db = open_stocked(path, sizeof(path));
	ASSERT_TRUE(db != NULL);
	matrix_add(night, "mire", "birch", 2e6, 2);
	ASSERT_INT_EQ(db_put_matrix(db, "night", night, &rev, &e), 0);
	ASSERT_INT_EQ(rev, 3);
	model_add_demand(net, "zeta", "alder", 4e8, 1, "demands", NULL);
	model_add_demand(net, "birch", "zeta", 6e8, 0, "demands", NULL);

	/*
	 * "night" names "mire", which the new topology lacks: the write goes
	 * through in one revision all the same, "day" (which used "mire"
	 * too) is replaced and "night" is kept as it was.
	 */
	ASSERT_INT_EQ(db_put_network(db, net, "day", &rev, &e), 0);
	ASSERT_INT_EQ(rev, 4);
	ASSERT_SHELL(path, "SELECT group_concat(id) FROM (SELECT id FROM nodes "
	    "ORDER BY ordinal);", "zeta,alder,birch");
	ASSERT_SHELL(path, "SELECT group_concat(src || '>' || dst || '@' || "
	    "priority) FROM (SELECT * FROM demands WHERE matrix = 'day' "
	    "ORDER BY ordinal);", "zeta>alder@1,birch>zeta@0");
	ASSERT_SHELL(path, "SELECT updated_revision FROM matrices "
	    "WHERE name = 'day';", "4");
	ASSERT_SHELL(path, "SELECT group_concat(src || '>' || dst || '@' || "
	    "priority || '=' || rate_bps) FROM demands WHERE matrix = "
	    "'night';", "mire>birch@2=2000000.0");
	ASSERT_SHELL(path, "SELECT updated_revision FROM matrices "
	    "WHERE name = 'night';", "3");

	/* Planning "night": its one demand (2e6 bit/s) cannot be placed. */
	policy_default(&p);
	p.matrix = "night";
	ASSERT_INT_EQ(db_put_policy(db, &p, &rev, &e), 0);
	ASSERT_INT_EQ(db_load_model(db, &m, &e), 0);
	if (m != NULL) {
		ASSERT_INT_EQ(m->n_demands, 0);
		ASSERT_INT_EQ(m->n_unplaced, 1);
		ASSERT_DBL_NEAR(m->unplaced_bps, 2e6, 0);
	}
	model_free(m);
	m = NULL;

	policy_default(&p);
	p.matrix = "day";
	ASSERT_INT_EQ(db_put_policy(db, &p, &rev, &e), 0);
	ASSERT_INT_EQ(db_load_model(db, &m, &e), 0);
	if (m != NULL) {
		assert_same_topology(net, m);
		ASSERT_INT_EQ(m->n_demands, 2);
		ASSERT_INT_EQ(m->n_unplaced, 0);
		if (m->n_demands == 2) {
			/* zeta 0, alder 1, birch 2 */
			ASSERT_INT_EQ(m->demands[1].src, 2);
			ASSERT_INT_EQ(m->demands[1].dst, 0);
			ASSERT_DBL_NEAR(m->demands[1].rate_bps, 6e8, 0);
		}
	}
	model_free(m);
	ASSERT_SHELL(path, "PRAGMA foreign_key_check;", "");
	matrix_free(night);
	model_free(net);
	db_close(db);
	TEST_DONE();
}

static void
test_plan_history(void)
{
	struct db *db = NULL;
	struct err e = { 0 };
	char path[128], json[64];
	int64_t last = -1, i;

	TEST_START("plan history keeps only the newest N rows");
	db = open_stocked(path, sizeof(path));
	ASSERT_TRUE(db != NULL);
	ASSERT_INT_EQ(db_last_plan_revision(db, &last, &e), 0);
	ASSERT_INT_EQ(last, 0);
	for (i = 1; i <= 7; i++) {
		snprintf(json, sizeof(json), "{\"plan\": %lld}", (long long)i);
		ASSERT_INT_EQ(db_record_plan(db, i, 2, json, 3, &e), 0);
	}
	/* Seven recorded, three kept: 5, 6, 7. */
	ASSERT_SHELL(path, "SELECT group_concat(plan_revision) FROM (SELECT "
	    "plan_revision FROM plan_history ORDER BY 1);", "5,6,7");
	ASSERT_SHELL(path, "SELECT summary_json FROM plan_history "
	    "WHERE plan_revision = 6;", "{\"plan\": 6}");
	ASSERT_INT_EQ(db_last_plan_revision(db, &last, &e), 0);
	ASSERT_INT_EQ(last, 7);
	ASSERT_INT_EQ(db_record_plan(db, 7, 2, "{}", 3, &e), ERR_CONFLICT);
	err_clear(&e);
	ASSERT_INT_EQ(db_record_plan(db, 8, 2, "{}", 0, &e), ERR_INVALID);
	ASSERT_SHELL(path, "SELECT count(*) FROM plan_history;", "3");
	/* A shorter keep trims at the next record. */
	ASSERT_INT_EQ(db_record_plan(db, 8, 2, "{}", 1, NULL), 0);
	ASSERT_SHELL(path, "SELECT group_concat(plan_revision) FROM "
	    "plan_history;", "8");
	ASSERT_INT_EQ(revision(db), 2);
	db_close(db);
	TEST_DONE();
}

static void
test_reopen(void)
{
	struct model *before = NULL, *after = NULL;
	struct link_patch lp = { .has_up = true, .up = false };
	struct db *db = NULL;
	struct err e = { 0 };
	char path[128];
	int64_t rev, last = 0;

	TEST_START("reopening a file keeps its data and revision");
	db = open_stocked(path, sizeof(path));
	ASSERT_TRUE(db != NULL);
	ASSERT_INT_EQ(db_patch_link(db, "l-zm", &lp, &rev, &e), 0);
	ASSERT_INT_EQ(db_record_plan(db, 41, 3, "{}", 5, &e), 0);
	ASSERT_INT_EQ(db_load_model(db, &before, &e), 0);
	db_close(db);
	db = NULL;
	ASSERT_INT_EQ(db_open(path, &db, &e), 0);
	ASSERT_INT_EQ(revision(db), 3);
	ASSERT_INT_EQ(db_last_plan_revision(db, &last, &e), 0);
	ASSERT_INT_EQ(last, 41);
	ASSERT_INT_EQ(db_load_model(db, &after, &e), 0);
	if (before != NULL && after != NULL) {
		assert_same_topology(before, after);
		ASSERT_INT_EQ(after->revision, 3);
		ASSERT_INT_EQ(after->links[0].up, 0);
	}
	/* The next write continues from the stored revision. */
	lp.up = true;
	ASSERT_INT_EQ(db_patch_link(db, "l-zm", &lp, &rev, &e), 0);
	ASSERT_INT_EQ(rev, 4);
	ASSERT_SHELL(path, "PRAGMA integrity_check;", "ok");
	ASSERT_SHELL(path, "PRAGMA journal_mode;", "wal");
	model_free(before);
	model_free(after);
	db_close(db);
	TEST_DONE();
}

static void
test_two_connections(void)
{
	struct matrix *mx = NULL;
	struct db *a = NULL, *b = NULL;
	struct err e = { 0 };
	char path[128];
	int64_t rev;

	TEST_START("a second connection sees each committed write");
	a = open_stocked(path, sizeof(path));
	ASSERT_TRUE(a != NULL);
	ASSERT_INT_EQ(db_open(path, &b, &e), 0);
	ASSERT_INT_EQ(revision(b), 2);
	ASSERT_INT_EQ(db_delete_matrix(a, "day", &rev, &e), 0);
	ASSERT_INT_EQ(revision(b), 3);
	ASSERT_INT_EQ(db_load_matrix(b, "day", &mx, NULL), ERR_NOTFOUND);
	db_close(b);
	db_close(a);
	TEST_DONE();
}

/* ---- SRLGs ---- */

/*
 * topo_four() with l-zm in SRLGs 30, 7 and 2^32 - 1 (given out of order,
 * 7 twice) and l-ma in SRLG 7; l-ab in none.  Stored ascending and once
 * each: l-ma:7, l-zm:7, l-zm:30, l-zm:4294967295.
 */
static struct model *
topo_four_srlgs(void)
{
	static const uint32_t zm[] = { 30, 7, 4294967295U, 7 }, ma[] = { 7 };
	struct model *m = topo_four();

	set_srlgs(m, 0, zm, 4);
	set_srlgs(m, 2, ma, 1);
	return m;
}

static void
test_srlgs_round_trip(void)
{
	struct model *topo = topo_four_srlgs(), *three = topo_three();
	struct model *m = NULL;
	struct db *db = NULL;
	struct err e = { 0 };
	char path[128];
	int64_t rev;

	TEST_START("SRLGs survive a topology put, a load and a reopen");
	new_path(path, sizeof(path));
	ASSERT_INT_EQ(db_open(path, &db, &e), 0);
	ASSERT_INT_EQ(db_put_topology(db, topo, &rev, &e), 0);
	ASSERT_INT_EQ(rev, 1);
	ASSERT_SHELL(path, "SELECT group_concat(link || ':' || srlg) FROM "
	    "(SELECT * FROM link_srlg ORDER BY link, srlg);",
	    "l-ma:7,l-zm:7,l-zm:30,l-zm:4294967295");
	ASSERT_INT_EQ(db_load_model(db, &m, &e), 0);
	if (m != NULL) {
		assert_same_topology(topo, m);
		ASSERT_INT_EQ(m->links[0].n_srlgs, 3);
		ASSERT_TRUE(link_in_srlg(&m->links[0], 4294967295U));
		ASSERT_TRUE(link_in_srlg(&m->links[2], 7));
		ASSERT_INT_EQ(m->links[1].n_srlgs, 0);
		ASSERT_TRUE(m->links[1].srlgs == NULL);
	}
	model_free(m);
	m = NULL;
	db_close(db);
	db = NULL;
	ASSERT_INT_EQ(db_open(path, &db, &e), 0);
	ASSERT_INT_EQ(db_load_topology(db, &m, &e), 0);
	if (m != NULL)
		assert_same_topology(topo, m);
	model_free(m);
	m = NULL;

	/* A topology without SRLGs replaces them all. */
	ASSERT_INT_EQ(db_put_topology(db, three, &rev, &e), 0);
	ASSERT_INT_EQ(rev, 2);
	ASSERT_SHELL(path, "SELECT count(*) FROM link_srlg;", "0");
	ASSERT_INT_EQ(db_put_topology(db, topo, &rev, &e), 0);
	ASSERT_SHELL(path, "SELECT count(*) FROM link_srlg;", "4");
	ASSERT_SHELL(path, "PRAGMA foreign_key_check;", "");
	ASSERT_INT_EQ(e.code, 0);
	model_free(topo);
	model_free(three);
	db_close(db);
	TEST_DONE();
}

static void
test_srlgs_network(void)
{
	static const uint32_t ab[] = { 12, 4 };
	struct model *net = topo_three(), *m = NULL;
	struct db *db = NULL;
	struct err e = { 0 };
	char path[128];
	int64_t rev;

	TEST_START("an import (put_network) stores its SRLGs and drops the "
	    "old ones");
	new_path(path, sizeof(path));
	ASSERT_INT_EQ(db_open(path, &db, &e), 0);
	m = topo_four_srlgs();
	ASSERT_INT_EQ(db_put_topology(db, m, &rev, &e), 0);
	model_free(m);
	m = NULL;
	set_srlgs(net, 0, ab, 2);
	model_add_demand(net, "zeta", "alder", 4e8, 1, "demands", NULL);
	ASSERT_INT_EQ(db_put_network(db, net, "day", &rev, &e), 0);
	ASSERT_INT_EQ(rev, 2);
	ASSERT_SHELL(path, "SELECT group_concat(link || ':' || srlg) FROM "
	    "(SELECT * FROM link_srlg ORDER BY link, srlg);",
	    "l-ab:4,l-ab:12");
	ASSERT_INT_EQ(db_load_topology(db, &m, &e), 0);
	if (m != NULL)
		assert_same_topology(net, m);
	model_free(m);
	model_free(net);
	db_close(db);
	TEST_DONE();
}

static void
test_srlgs_patch(void)
{
	struct link_patch lp;
	struct model *topo = topo_four(), *m = NULL;
	struct db *db = NULL;
	struct err e = { 0 };
	char path[128];
	int64_t rev = 99;

	TEST_START("PATCH replaces a link's SRLGs; other patches keep them");
	db = open_stocked(path, sizeof(path));
	ASSERT_TRUE(db != NULL);
	memset(&lp, 0, sizeof(lp));
	lp.has_srlgs = true;
	lp.srlgs[0] = 5;
	lp.srlgs[1] = 1;
	lp.srlgs[2] = 5;
	lp.n_srlgs = 3;
	ASSERT_INT_EQ(db_patch_link(db, "l-ab", &lp, &rev, &e), 0);
	ASSERT_INT_EQ(rev, 3);
	ASSERT_SHELL(path, "SELECT group_concat(link || ':' || srlg) FROM "
	    "(SELECT * FROM link_srlg ORDER BY link, srlg);", "l-ab:1,l-ab:5");
	/* The rest of the link is as it was. */
	ASSERT_SHELL(path, "SELECT up, capacity_bps, te_metric FROM links "
	    "WHERE id = 'l-ab';", "0|1000000000.0|5.0");

	/* A patch without srlgs keeps them. */
	memset(&lp, 0, sizeof(lp));
	lp.has_up = true;
	lp.up = true;
	ASSERT_INT_EQ(db_patch_link(db, "l-ab", &lp, &rev, &e), 0);
	ASSERT_INT_EQ(rev, 4);
	ASSERT_INT_EQ(db_load_model(db, &m, &e), 0);
	if (m != NULL && m->n_links == 3) {
		ASSERT_INT_EQ(m->links[1].n_srlgs, 2);
		ASSERT_TRUE(link_in_srlg(&m->links[1], 1) &&
		    link_in_srlg(&m->links[1], 5));
		ASSERT_INT_EQ(m->links[1].up, 1);
		ASSERT_INT_EQ(m->links[0].n_srlgs, 0);
	}
	model_free(m);
	m = NULL;

	/* A new set replaces the old one whole. */
	memset(&lp, 0, sizeof(lp));
	lp.has_srlgs = true;
	lp.srlgs[0] = 4294967295U;
	lp.n_srlgs = 1;
	ASSERT_INT_EQ(db_patch_link(db, "l-ab", &lp, &rev, &e), 0);
	ASSERT_SHELL(path, "SELECT group_concat(link || ':' || srlg) FROM "
	    "link_srlg;", "l-ab:4294967295");

	/* Refusals change nothing. */
	lp.n_srlgs = MODEL_SRLG_MAX + 1;
	ASSERT_INT_EQ(db_patch_link(db, "l-ab", &lp, &rev, &e), ERR_INVALID);
	ASSERT_STR_EQ(e.where, "srlgs");
	err_clear(&e);
	lp.n_srlgs = 1;
	ASSERT_INT_EQ(db_patch_link(db, "l-none", &lp, &rev, &e),
	    ERR_NOTFOUND);
	ASSERT_STR_EQ(e.where, "id");
	ASSERT_INT_EQ(revision(db), 5);
	ASSERT_SHELL(path, "SELECT count(*) FROM link_srlg;", "1");

	/* An empty set takes the link out of every SRLG. */
	err_clear(&e);
	lp.n_srlgs = 0;
	ASSERT_INT_EQ(db_patch_link(db, "l-ab", &lp, &rev, &e), 0);
	ASSERT_INT_EQ(rev, 6);
	ASSERT_SHELL(path, "SELECT count(*) FROM link_srlg;", "0");

	/* A topology with too many SRLGs on a link (made by hand: the model
	   refuses it) is refused at links[i].srlgs. */
	topo->links[2].srlgs = xcalloc(MODEL_SRLG_MAX + 1, sizeof(uint32_t));
	topo->links[2].n_srlgs = MODEL_SRLG_MAX + 1;
	ASSERT_INT_EQ(db_put_topology(db, topo, &rev, &e), ERR_INVALID);
	ASSERT_STR_EQ(e.where, "links[2].srlgs");
	ASSERT_INT_EQ(revision(db), 6);
	model_free(topo);
	db_close(db);
	TEST_DONE();
}

/*
 * A database at schema version 2 (the first two migrations, as compiled
 * in, run by the sqlite3 shell) with one link gains the SRLG and sweep
 * tables at open and keeps its data; the link is in no SRLG.
 */
static void
test_migrate_from_2(void)
{
	struct model *m = NULL;
	struct db *db = NULL;
	struct err e = { 0 };
	char path[128], *sql, *out;
	char want[32];

	TEST_START("migrates a schema 2 database: links keep their data, "
	    "in no SRLG");
	new_path(path, sizeof(path));
	sql = xasprintf("%s%sPRAGMA user_version = 2;\n"
	    "INSERT INTO nodes (id, ordinal) VALUES ('p', 0), ('q', 1);\n"
	    "INSERT INTO links (id, ordinal, a, b, capacity_bps, te_metric, "
	    "up) VALUES ('pq', 0, 'p', 'q', 1e9, 3, 1);\n"
	    "UPDATE meta SET value = 4 WHERE key = 'model_revision';\n",
	    schema_migrations[0], schema_migrations[1]);
	out = shell(path, sql);
	ASSERT_STR_EQ(out, "");
	free(out);
	free(sql);
	ASSERT_SHELL(path, "PRAGMA user_version;", "2");
	ASSERT_INT_EQ(db_open(path, &db, &e), 0);
	snprintf(want, sizeof(want), "%zu", schema_migrations_n);
	ASSERT_SHELL(path, "PRAGMA user_version;", want);
	ASSERT_INT_EQ(revision(db), 4);
	ASSERT_INT_EQ(db_load_topology(db, &m, &e), 0);
	if (m != NULL) {
		ASSERT_INT_EQ(m->n_links, 1);
		if (m->n_links == 1) {
			ASSERT_STR_EQ(m->links[0].id, "pq");
			ASSERT_DBL_NEAR(m->links[0].te_metric, 3, 0);
			ASSERT_INT_EQ(m->links[0].n_srlgs, 0);
		}
	}
	ASSERT_SHELL(path, "SELECT count(*) FROM sweeps;", "0");
	ASSERT_SHELL(path, "PRAGMA integrity_check;", "ok");
	model_free(m);
	db_close(db);
	TEST_DONE();
}

int
main(void)
{
	if (mkdtemp(tmpdir) == NULL) {
		perror("mkdtemp");
		return 1;
	}
	test_new_file();
	test_empty_file();
	test_not_a_database();
	test_newer_schema();
	test_missing_dir();
	test_round_trip();
	test_default_policy();
	test_policy_missing_matrix();
	test_revision_counting();
	test_unknown_node();
	test_topology_keeps_matrices();
	test_topology_invalid();
	test_patch_link();
	test_unknown_link();
	test_delete_matrix();
	test_names();
	test_put_network();
	test_plan_history();
	test_reopen();
	test_two_connections();
	test_srlgs_round_trip();
	test_srlgs_network();
	test_srlgs_patch();
	test_migrate_from_2();
	rm_tmpdir();
	return tap_finish();
}
