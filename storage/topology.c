/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Stored topology: replacing nodes and links (with their SRLGs), patching a
   link, loading. */

/*
 * DESIGN
 * A topology is always replaced whole: inside one IMMEDIATE transaction
 * every link and node row is deleted and the new ones inserted with their
 * position as ordinal, so loading them ORDER BY ordinal gives back the
 * caller's order (plans are arrays parallel to nodes[] and links[]).  The
 * foreign keys from links to nodes are deferred to commit, so the rows may
 * be briefly dangling mid-transaction.  A link's SRLGs are rows of
 * link_srlg, written after the links and deleted before them; they are
 * read back ascending, the order model_set_link_srlgs() keeps; a patch
 * with SRLGs replaces that link's rows.  Stored matrices are not touched
 * by a replacement, and nothing ties their demands to the nodes: a matrix
 * may name nodes the new topology lacks, so replacing the topology never
 * fails because of an old matrix and never loses one.  Loading reads topology,
 * policy, demands and revision in one read transaction, so the snapshot is
 * one committed state; demands of the policy's matrix whose src or dst is
 * not in the loaded topology are left out of the model's demands and only
 * counted (n_unplaced, unplaced_bps), so the plan can report them.
 */

#include <math.h>
#include <stdint.h>
#include <stdio.h>
#include <string.h>

#include <sqlite3.h>

#include "db.h"
#include "db_internal.h"
#include "../daemon/base/err.h"
#include "../daemon/engine/model.h"

/* ---- validation ---- */

static int
check_id(const char *id, const char *kind, size_t i, struct err *e)
{
	const unsigned char *p;
	char where[48];

	snprintf(where, sizeof(where), "%s[%zu].id", kind, i);
	if (id == NULL || id[0] == '\0')
		return err_set(e, ERR_INVALID, where, "empty id");
	if (strlen(id) > MODEL_ID_MAX)
		return err_set(e, ERR_INVALID, where,
		    "id longer than %d bytes", MODEL_ID_MAX);
	/* The model refuses these on load; refuse them on the way in. */
	for (p = (const unsigned char *)id; *p != '\0'; p++)
		if (*p < 0x20 || *p == 0x7f)
			return err_set(e, ERR_INVALID, where,
			    "id holds a control character");
	return 0;
}

/*
 * Checks what the schema's constraints would reject, so the caller gets a
 * where and a sentence instead of a constraint name.  Duplicate ids are
 * caught by the primary keys during the insert (see put_nodes()).
 */
static int
check_topology(const struct model *topo, struct err *e)
{
	const struct node *nd;
	const struct link *l;
	char where[64];
	size_t i;
	int r;

	for (i = 0; i < topo->n_nodes; i++) {
		nd = &topo->nodes[i];
		if ((r = check_id(nd->id, "nodes", i, e)) != 0)
			return r;
		if (!nd->has_coords)
			continue;
		if (!isfinite(nd->lat) || fabs(nd->lat) > 90) {
			snprintf(where, sizeof(where), "nodes[%zu].lat", i);
			return err_set(e, ERR_INVALID, where,
			    "latitude must be within [-90, 90] degrees");
		}
		if (!isfinite(nd->lon) || fabs(nd->lon) > 180) {
			snprintf(where, sizeof(where), "nodes[%zu].lon", i);
			return err_set(e, ERR_INVALID, where,
			    "longitude must be within [-180, 180] degrees");
		}
	}
	for (i = 0; i < topo->n_links; i++) {
		l = &topo->links[i];
		if ((r = check_id(l->id, "links", i, e)) != 0)
			return r;
		if (l->a >= topo->n_nodes || l->b >= topo->n_nodes) {
			snprintf(where, sizeof(where), "links[%zu].%s", i,
			    l->a >= topo->n_nodes ? "a" : "b");
			return err_set(e, ERR_INVALID, where,
			    "node index out of range");
		}
		if (l->a == l->b) {
			snprintf(where, sizeof(where), "links[%zu].b", i);
			return err_set(e, ERR_INVALID, where,
			    "link ends must differ");
		}
		if (!isfinite(l->capacity_bps) || l->capacity_bps <= 0 ||
		    l->capacity_bps > MODEL_RATE_MAX) {
			snprintf(where, sizeof(where), "links[%zu].capacity_bps",
			    i);
			return err_set(e, ERR_INVALID, where,
			    "capacity must be in (0, %g] bit/s", MODEL_RATE_MAX);
		}
		if (!isfinite(l->te_metric) || l->te_metric <= 0 ||
		    l->te_metric > MODEL_METRIC_MAX) {
			snprintf(where, sizeof(where), "links[%zu].te_metric",
			    i);
			return err_set(e, ERR_INVALID, where,
			    "TE metric must be in (0, %g]", MODEL_METRIC_MAX);
		}
		if (l->n_srlgs > MODEL_SRLG_MAX ||
		    (l->n_srlgs > 0 && l->srlgs == NULL)) {
			snprintf(where, sizeof(where), "links[%zu].srlgs", i);
			return err_set(e, ERR_INVALID, where, "a link is in at "
			    "most %d SRLGs", MODEL_SRLG_MAX);
		}
	}
	return 0;
}

/* ---- writing ---- */

/*
 * Steps the bound insert of the i-th node or link (kind "node" or "link",
 * id its id).  An id inserted before is ERR_INVALID at "nodes[i].id" or
 * "links[i].id"; any other failure is db_fail()'s.
 */
static int
insert_item(struct db *db, sqlite3_stmt *st, const char *kind, size_t i,
    const char *id, struct err *e)
{
	char where[48], what[32];
	int rc;

	rc = sqlite3_step(st);
	if (rc == SQLITE_CONSTRAINT_PRIMARYKEY) {
		snprintf(where, sizeof(where), "%ss[%zu].id", kind, i);
		return err_set(e, ERR_INVALID, where,
		    "duplicate %s id \"%s\"", kind, id);
	}
	if (rc != SQLITE_DONE) {
		snprintf(what, sizeof(what), "storing a %s", kind);
		return db_fail(db, rc, what, e);
	}
	return 0;
}

static int
put_nodes(struct db *db, const struct model *topo, struct err *e)
{
	sqlite3_stmt *st = NULL;
	const struct node *nd;
	size_t i;
	int r = ERR_INTERNAL, rc;

	if ((r = db_prepare(db, "INSERT INTO nodes (id, ordinal, name, lat, "
	    "lon) VALUES (?1, ?2, ?3, ?4, ?5)", &st, e)) != 0)
		goto out;
	for (i = 0; i < topo->n_nodes; i++) {
		nd = &topo->nodes[i];
		sqlite3_reset(st);
		if ((rc = sqlite3_bind_text(st, 1, nd->id, -1,
		    SQLITE_STATIC)) != SQLITE_OK ||
		    (rc = sqlite3_bind_int64(st, 2, (sqlite3_int64)i)) !=
		    SQLITE_OK ||
		    (rc = nd->name != NULL ? sqlite3_bind_text(st, 3,
		    nd->name, -1, SQLITE_STATIC) : sqlite3_bind_null(st, 3)) !=
		    SQLITE_OK ||
		    (rc = nd->has_coords ? sqlite3_bind_double(st, 4,
		    nd->lat) : sqlite3_bind_null(st, 4)) != SQLITE_OK ||
		    (rc = nd->has_coords ? sqlite3_bind_double(st, 5,
		    nd->lon) : sqlite3_bind_null(st, 5)) != SQLITE_OK) {
			r = db_fail(db, rc, "binding a node", e);
			goto out;
		}
		if ((r = insert_item(db, st, "node", i, nd->id, e)) != 0)
			goto out;
	}
	r = 0;
out:
	sqlite3_finalize(st);
	return r;
}

static int
put_links(struct db *db, const struct model *topo, struct err *e)
{
	sqlite3_stmt *st = NULL;
	const struct link *l;
	size_t i;
	int r = ERR_INTERNAL, rc;

	if ((r = db_prepare(db, "INSERT INTO links (id, ordinal, a, b, "
	    "capacity_bps, te_metric, up) VALUES (?1, ?2, ?3, ?4, ?5, ?6, ?7)",
	    &st, e)) != 0)
		goto out;
	for (i = 0; i < topo->n_links; i++) {
		l = &topo->links[i];
		sqlite3_reset(st);
		/* The model holds node indices; the store holds node ids. */
		if ((rc = sqlite3_bind_text(st, 1, l->id, -1,
		    SQLITE_STATIC)) != SQLITE_OK ||
		    (rc = sqlite3_bind_int64(st, 2, (sqlite3_int64)i)) !=
		    SQLITE_OK ||
		    (rc = sqlite3_bind_text(st, 3, topo->nodes[l->a].id, -1,
		    SQLITE_STATIC)) != SQLITE_OK ||
		    (rc = sqlite3_bind_text(st, 4, topo->nodes[l->b].id, -1,
		    SQLITE_STATIC)) != SQLITE_OK ||
		    (rc = sqlite3_bind_double(st, 5, l->capacity_bps)) !=
		    SQLITE_OK ||
		    (rc = sqlite3_bind_double(st, 6, l->te_metric)) !=
		    SQLITE_OK ||
		    (rc = sqlite3_bind_int(st, 7, l->up ? 1 : 0)) != SQLITE_OK) {
			r = db_fail(db, rc, "binding a link", e);
			goto out;
		}
		if ((r = insert_item(db, st, "link", i, l->id, e)) != 0)
			goto out;
	}
	r = 0;
out:
	sqlite3_finalize(st);
	return r;
}

/*
 * Prepares the insert of one link's SRLG (?1 link id, ?2 SRLG).  A repeat
 * is stored once.
 */
static int
prepare_srlg(struct db *db, sqlite3_stmt **stp, struct err *e)
{
	return db_prepare(db, "INSERT INTO link_srlg (link, srlg) "
	    "VALUES (?1, ?2) ON CONFLICT DO NOTHING", stp, e);
}

/* Stores the n SRLGs s of link id with st from prepare_srlg(). */
static int
put_link_srlgs(struct db *db, sqlite3_stmt *st, const char *id,
    const uint32_t *s, size_t n, struct err *e)
{
	size_t k;
	int r, rc;

	for (k = 0; k < n; k++) {
		sqlite3_reset(st);
		if ((rc = sqlite3_bind_text(st, 1, id, -1, SQLITE_STATIC)) !=
		    SQLITE_OK ||
		    (rc = sqlite3_bind_int64(st, 2, (sqlite3_int64)s[k])) !=
		    SQLITE_OK)
			return db_fail(db, rc, "binding an SRLG", e);
		if ((r = db_step(db, st, NULL, "storing an SRLG", e)) != 0)
			return r;
	}
	return 0;
}

static int
put_srlgs(struct db *db, const struct model *topo, struct err *e)
{
	sqlite3_stmt *st = NULL;
	const struct link *l;
	size_t i;
	int r = ERR_INTERNAL;

	if ((r = prepare_srlg(db, &st, e)) != 0)
		goto out;
	for (i = 0; i < topo->n_links; i++) {
		l = &topo->links[i];
		if ((r = put_link_srlgs(db, st, l->id, l->srlgs, l->n_srlgs,
		    e)) != 0)
			goto out;
	}
	r = 0;
out:
	sqlite3_finalize(st);
	return r;
}

/* Inside the write transaction: replaces all nodes and links. */
static int
replace_topology(struct db *db, const struct model *topo, struct err *e)
{
	int r;

	/* SRLGs, then links: each refers to what follows it. */
	if ((r = db_exec(db, "DELETE FROM link_srlg", e)) != 0 ||
	    (r = db_exec(db, "DELETE FROM links", e)) != 0 ||
	    (r = db_exec(db, "DELETE FROM nodes", e)) != 0 ||
	    (r = put_nodes(db, topo, e)) != 0 ||
	    (r = put_links(db, topo, e)) != 0 ||
	    (r = put_srlgs(db, topo, e)) != 0)
		return r;
	return 0;
}

int
db_put_topology(struct db *db, const struct model *topo, int64_t *revp,
    struct err *e)
{
	int64_t rev = 0;
	int r = ERR_INTERNAL;

	*revp = 0;
	if (topo == NULL) {
		r = err_set(e, ERR_INVALID, NULL, "no topology");
		goto out;
	}
	if ((r = check_topology(topo, e)) != 0)
		goto out;
	if ((r = db_begin_change(db, &rev, e)) != 0 ||
	    (r = replace_topology(db, topo, e)) != 0 ||
	    (r = db_commit(db, e)) != 0)
		goto out;
	*revp = rev;
	r = 0;
out:
	if (r != 0)
		db_rollback(db);
	return r;
}

/*
 * Turns net's demands (node indices) into a matrix of node ids after
 * checking the indices; field checks are matrix_check()'s.
 */
static int
net_matrix(const struct model *net, const char *name, struct matrix **mxp,
    struct err *e)
{
	struct matrix *mx = NULL;
	const struct demand *d;
	char where[48];
	size_t i;
	int r = ERR_INTERNAL;

	*mxp = NULL;
	for (i = 0; i < net->n_demands; i++) {
		d = &net->demands[i];
		if (d->src >= net->n_nodes || d->dst >= net->n_nodes) {
			snprintf(where, sizeof(where), "demands[%zu].%s", i,
			    d->src >= net->n_nodes ? "src" : "dst");
			r = err_set(e, ERR_INVALID, where,
			    "node index out of range");
			goto out;
		}
	}
	mx = matrix_new(name);
	for (i = 0; i < net->n_demands; i++) {
		d = &net->demands[i];
		matrix_add(mx, net->nodes[d->src].id, net->nodes[d->dst].id,
		    d->rate_bps, d->priority);
	}
	if ((r = matrix_check(mx, e)) != 0)
		goto out;
	*mxp = mx;
	mx = NULL;
	r = 0;
out:
	matrix_free(mx);
	return r;
}

int
db_put_network(struct db *db, const struct model *net, const char *name,
    int64_t *revp, struct err *e)
{
	struct matrix *mx = NULL;
	int64_t rev = 0;
	int r = ERR_INTERNAL;

	*revp = 0;
	if (net == NULL) {
		r = err_set(e, ERR_INVALID, NULL, "no network");
		goto out;
	}
	if ((r = db_check_name(name, "name", e)) != 0 ||
	    (r = check_topology(net, e)) != 0 ||
	    (r = net_matrix(net, name, &mx, e)) != 0)
		goto out;
	/* The other matrices stay as they are, even those naming nodes the
	   new topology lacks (see DESIGN). */
	if ((r = db_begin_change(db, &rev, e)) != 0 ||
	    (r = replace_topology(db, net, e)) != 0 ||
	    (r = db_write_matrix(db, name, mx, rev, e)) != 0 ||
	    (r = db_commit(db, e)) != 0)
		goto out;
	*revp = rev;
	r = 0;
out:
	if (r != 0)
		db_rollback(db);
	matrix_free(mx);
	return r;
}

int
db_patch_link(struct db *db, const char *id, const struct link_patch *lp,
    int64_t *revp, struct err *e)
{
	sqlite3_stmt *st = NULL;
	int64_t rev = 0;
	int r = ERR_INTERNAL, rc;

	*revp = 0;
	if (id == NULL || id[0] == '\0') {
		r = err_set(e, ERR_INVALID, "id", "empty link id");
		goto out;
	}
	if (lp == NULL) {
		r = err_set(e, ERR_INVALID, NULL, "no link change");
		goto out;
	}
	if (lp->has_capacity && (!isfinite(lp->capacity_bps) ||
	    lp->capacity_bps <= 0 || lp->capacity_bps > MODEL_RATE_MAX)) {
		r = err_set(e, ERR_INVALID, "capacity_bps",
		    "capacity must be in (0, %g] bit/s", MODEL_RATE_MAX);
		goto out;
	}
	if (lp->has_metric && (!isfinite(lp->te_metric) ||
	    lp->te_metric <= 0 || lp->te_metric > MODEL_METRIC_MAX)) {
		r = err_set(e, ERR_INVALID, "te_metric",
		    "TE metric must be in (0, %g]", MODEL_METRIC_MAX);
		goto out;
	}
	if (lp->has_srlgs && lp->n_srlgs > MODEL_SRLG_MAX) {
		r = err_set(e, ERR_INVALID, "srlgs", "a link is in at most %d "
		    "SRLGs, not %zu", MODEL_SRLG_MAX, lp->n_srlgs);
		goto out;
	}
	/* A NULL parameter keeps the stored value. */
	if ((r = db_begin_change(db, &rev, e)) != 0 ||
	    (r = db_prepare(db, "UPDATE links SET up = coalesce(?2, up), "
	    "capacity_bps = coalesce(?3, capacity_bps), "
	    "te_metric = coalesce(?4, te_metric) WHERE id = ?1", &st, e)) != 0)
		goto out;
	if ((rc = sqlite3_bind_text(st, 1, id, -1, SQLITE_STATIC)) !=
	    SQLITE_OK ||
	    (rc = lp->has_up ? sqlite3_bind_int(st, 2, lp->up ? 1 : 0) :
	    sqlite3_bind_null(st, 2)) != SQLITE_OK ||
	    (rc = lp->has_capacity ? sqlite3_bind_double(st, 3,
	    lp->capacity_bps) : sqlite3_bind_null(st, 3)) != SQLITE_OK ||
	    (rc = lp->has_metric ? sqlite3_bind_double(st, 4,
	    lp->te_metric) : sqlite3_bind_null(st, 4)) != SQLITE_OK) {
		r = db_fail(db, rc, "binding a link change", e);
		goto out;
	}
	if ((r = db_step(db, st, NULL, "changing a link", e)) != 0)
		goto out;
	/* A row counts as changed even when it keeps every value. */
	if (sqlite3_changes(db->sq) == 0) {
		r = err_set(e, ERR_NOTFOUND, "id", "no link \"%s\"", id);
		goto out;
	}
	sqlite3_finalize(st);
	st = NULL;
	if (lp->has_srlgs &&
	    ((r = db_run_key(db, "DELETE FROM link_srlg WHERE link = ?1", id,
	    NULL, "deleting a link's SRLGs", e)) != 0 ||
	    (r = prepare_srlg(db, &st, e)) != 0 ||
	    (r = put_link_srlgs(db, st, id, lp->srlgs, lp->n_srlgs, e)) != 0))
		goto out;
	if ((r = db_commit(db, e)) != 0)
		goto out;
	*revp = rev;
	r = 0;
out:
	sqlite3_finalize(st);
	if (r != 0)
		db_rollback(db);
	return r;
}

/* ---- loading ---- */

static int
read_nodes(struct db *db, struct model *m, struct err *e)
{
	sqlite3_stmt *st = NULL;
	const char *id, *name;
	struct err le;
	size_t idx;
	int r = ERR_INTERNAL, rc;

	if ((r = db_prepare(db, "SELECT id, name, lat, lon FROM nodes "
	    "ORDER BY ordinal", &st, e)) != 0)
		goto out;
	while ((rc = sqlite3_step(st)) == SQLITE_ROW) {
		id = (const char *)sqlite3_column_text(st, 0);
		name = (const char *)sqlite3_column_text(st, 1);
		err_clear(&le);
		if (id == NULL || model_add_node(m, id, name, &idx, "nodes",
		    &le) != 0) {
			r = err_set(e, ERR_DB, NULL, "stored node \"%s\" is "
			    "unusable: %s", id != NULL ? id : "", le.msg);
			goto out;
		}
		if (sqlite3_column_type(st, 2) != SQLITE_NULL &&
		    sqlite3_column_type(st, 3) != SQLITE_NULL) {
			m->nodes[idx].lat = sqlite3_column_double(st, 2);
			m->nodes[idx].lon = sqlite3_column_double(st, 3);
			m->nodes[idx].has_coords = true;
		}
	}
	if (rc != SQLITE_DONE) {
		r = db_fail(db, rc, "reading nodes", e);
		goto out;
	}
	r = 0;
out:
	sqlite3_finalize(st);
	return r;
}

static int
read_links(struct db *db, struct model *m, struct err *e)
{
	sqlite3_stmt *st = NULL;
	const char *id, *a, *b;
	struct err le;
	int r = ERR_INTERNAL, rc;

	if ((r = db_prepare(db, "SELECT id, a, b, capacity_bps, te_metric, up "
	    "FROM links ORDER BY ordinal", &st, e)) != 0)
		goto out;
	while ((rc = sqlite3_step(st)) == SQLITE_ROW) {
		id = (const char *)sqlite3_column_text(st, 0);
		a = (const char *)sqlite3_column_text(st, 1);
		b = (const char *)sqlite3_column_text(st, 2);
		err_clear(&le);
		if (id == NULL || a == NULL || b == NULL ||
		    model_add_link(m, id, a, b, sqlite3_column_double(st, 3),
		    sqlite3_column_double(st, 4),
		    sqlite3_column_int(st, 5) != 0, "links", &le) != 0) {
			r = err_set(e, ERR_DB, NULL, "stored link \"%s\" is "
			    "unusable: %s", id != NULL ? id : "", le.msg);
			goto out;
		}
	}
	if (rc != SQLITE_DONE) {
		r = db_fail(db, rc, "reading links", e);
		goto out;
	}
	r = 0;
out:
	sqlite3_finalize(st);
	return r;
}

/*
 * Gives the links of m (read by read_links()) their stored SRLGs.  Rows
 * come by link, so each link's run is gathered and set at once.
 */
static int
read_srlgs(struct db *db, struct model *m, struct err *e)
{
	sqlite3_stmt *st = NULL;
	uint32_t buf[MODEL_SRLG_MAX];
	sqlite3_int64 ordinal, cur = -1, g;
	const char *id;
	size_t n = 0;
	long li = -1;
	int r = ERR_INTERNAL, rc;

	if ((r = db_prepare(db, "SELECT l.ordinal, l.id, s.srlg FROM link_srlg "
	    "s JOIN links l ON l.id = s.link ORDER BY l.ordinal, s.srlg", &st,
	    e)) != 0)
		goto out;
	for (;;) {
		rc = sqlite3_step(st);
		if (rc != SQLITE_ROW && rc != SQLITE_DONE) {
			r = db_fail(db, rc, "reading SRLGs", e);
			goto out;
		}
		ordinal = rc == SQLITE_ROW ? sqlite3_column_int64(st, 0) : -1;
		/* The end of a link's run (or of all rows): set it. */
		if (li >= 0 && (rc == SQLITE_DONE || ordinal != cur)) {
			if ((r = model_set_link_srlgs(m, (size_t)li, buf, n,
			    "links", NULL)) != 0) {
				r = err_set(e, ERR_DB, NULL, "stored link \"%s\" "
				    "has unusable SRLGs", m->links[li].id);
				goto out;
			}
			li = -1;
		}
		if (rc == SQLITE_DONE)
			break;
		if (li < 0) {
			id = (const char *)sqlite3_column_text(st, 1);
			if (id == NULL || (li = model_find_link(m, id)) < 0) {
				r = err_set(e, ERR_DB, NULL, "stored SRLGs name "
				    "a link that was not read");
				goto out;
			}
			cur = ordinal;
			n = 0;
		}
		g = sqlite3_column_int64(st, 2);
		if (g < 0 || g > UINT32_MAX || n == MODEL_SRLG_MAX) {
			r = err_set(e, ERR_DB, NULL, "stored link \"%s\" has "
			    "an SRLG out of range or more than %d SRLGs",
			    m->links[li].id, MODEL_SRLG_MAX);
			goto out;
		}
		buf[n++] = (uint32_t)g;
	}
	r = 0;
out:
	sqlite3_finalize(st);
	return r;
}

/*
 * Sets m's demands to the entries of mx whose ends are both nodes of m, in
 * mx's order, and counts the others in m->n_unplaced and m->unplaced_bps.
 * An entry that names known nodes but is still refused (storage checked it
 * when it was put) means the file was changed behind our back: ERR_DB.
 */
static int
place(struct model *m, const struct matrix *mx, struct err *e)
{
	const struct matrix_entry *me;
	struct err le;
	char where[48];
	size_t i;

	model_clear_demands(m);
	for (i = 0; i < mx->n; i++) {
		me = &mx->entries[i];
		if (model_find_node(m, me->src) < 0 ||
		    model_find_node(m, me->dst) < 0) {
			m->n_unplaced++;
			m->unplaced_bps += me->rate_bps;
			continue;
		}
		snprintf(where, sizeof(where), "demands[%zu]", i);
		err_clear(&le);
		if (model_add_demand(m, me->src, me->dst, me->rate_bps,
		    me->priority, where, &le) != 0) {
			model_clear_demands(m);
			return err_set(e, ERR_DB, NULL, "stored matrix \"%s\" "
			    "holds an unusable demand: %s",
			    mx->name != NULL ? mx->name : "", le.msg);
		}
	}
	return 0;
}

/* Reads one consistent snapshot; demands only when with_demands. */
static int
load(struct db *db, bool with_demands, struct model **mp, struct err *e)
{
	struct model *m = NULL;
	struct matrix *mx = NULL;
	int64_t rev;
	int r = ERR_INTERNAL;

	*mp = NULL;
	m = model_new();
	if ((r = db_begin(db, false, e)) != 0 ||
	    (r = db_read_revision(db, &rev, e)) != 0 ||
	    (r = read_nodes(db, m, e)) != 0 ||
	    (r = read_links(db, m, e)) != 0 ||
	    (r = read_srlgs(db, m, e)) != 0 ||
	    (r = db_read_policy(db, &m->policy, e)) != 0)
		goto out;
	if (with_demands && m->policy.matrix != NULL) {
		if ((r = db_read_matrix(db, m->policy.matrix, &mx, e)) != 0)
			goto out;
		if (mx != NULL && (r = place(m, mx, e)) != 0)
			goto out;
	}
	if ((r = db_commit(db, e)) != 0)
		goto out;
	m->revision = rev;
	*mp = m;
	m = NULL;
	r = 0;
out:
	if (r != 0)
		db_rollback(db);
	matrix_free(mx);
	model_free(m);
	return r;
}

int
db_load_model(struct db *db, struct model **mp, struct err *e)
{
	return load(db, true, mp, e);
}

int
db_load_topology(struct db *db, struct model **mp, struct err *e)
{
	return load(db, false, mp, e);
}
