/* SPDX-License-Identifier: GPL-3.0-or-later */
/* The plan's routes and loads as streamed JSON: filtered, paged, cursors. */

/*
 * DESIGN
 * A list is a small state machine: the head ({"revision":..,
 * "model_revision":..,"routes":[), then one entry per matching demand or
 * link, then the tail (],"max_utilization":.. for loads, "next" when
 * paged, }).  Each step renders into the pending buffer, which
 * plan_list_fill() drains into libmicrohttpd's buffer; the pending buffer
 * holds at most one entry (a demand with all its paths), so memory stays
 * bounded by the largest entry, not by the plan.  Entries are written by
 * api/codec_plan.c's per-entry functions, the same code the whole texts
 * use, so the unpaged stream equals codec_plan_render()'s text byte for
 * byte (tests/unit/api/plan_list_test.c).  Finding the next match is a
 * linear scan from the current index (a link filter looks at each
 * demand's paths); "next" is given only when another match exists.
 */

#include <inttypes.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "plan_list.h"
#include "codec_plan.h"
#include "http.h"
#include "../daemon/base/err.h"
#include "../daemon/base/log.h"
#include "../daemon/base/xalloc.h"
#include "../daemon/engine/model.h"
#include "../daemon/engine/plan.h"

enum { HEAD, ITEMS, TAIL, END };

struct plan_list {
	const struct model *m;	/* borrowed */
	const struct plan *p;	/* borrowed, may be NULL */
	int64_t revision;	/* plan revision */
	struct plan_list_opts o;
	size_t n;		/* entries walked: demands or links */
	size_t at;		/* next index to look at */
	size_t sent;		/* entries written */
	int state;
	char *buf;		/* owned: pending text */
	size_t len, cap, off;	/* used, allocated, already handed out */
};

size_t
plan_list_size(const struct model *m, const struct plan *p,
    enum plan_list_kind kind)
{
	if (m == NULL || p == NULL)
		return 0;
	return kind == PLAN_LIST_ROUTES ? p->n_routes : m->n_links;
}

struct plan_list *
plan_list_new(const struct model *m, const struct plan *p, int64_t revision,
    const struct plan_list_opts *o)
{
	struct plan_list *l = xcalloc(1, sizeof(*l));

	l->m = m;
	l->p = p;
	l->revision = revision;
	l->o = *o;
	l->n = plan_list_size(m, p, o->kind);
	l->at = o->start < l->n ? o->start : l->n;
	l->state = HEAD;
	return l;
}

void
plan_list_free(struct plan_list *l)
{
	if (l == NULL)
		return;
	free(l->buf);
	free(l);
}

/* Appends the text s to the pending buffer. */
static void
put(struct plan_list *l, const char *s)
{
	size_t n = strlen(s), cap;

	if (l->cap - l->len < n) {
		cap = l->cap == 0 ? 4096 : l->cap;
		while (cap - l->len < n)
			cap *= 2;
		l->buf = xreallocarray(l->buf, 1, cap);
		l->cap = cap;
	}
	memcpy(l->buf + l->len, s, n);
	l->len += n;
}

/* Whether demand k has a path over link. */
static bool
uses_link(const struct plan_route *pr, size_t link)
{
	size_t i, a;

	for (i = 0; i < pr->n_paths; i++)
		for (a = 0; a < pr->paths[i].n_arcs; a++)
			if (pr->paths[i].arcs[a] / 2 == link)
				return true;
	return false;
}

static bool
matches(const struct plan_list *l, size_t k)
{
	const struct demand *d;
	const struct link *ln;
	const struct plan_list_opts *o = &l->o;

	if (o->kind == PLAN_LIST_ROUTES) {
		d = &l->m->demands[k];
		return (o->src < 0 || d->src == (size_t)o->src) &&
		    (o->dst < 0 || d->dst == (size_t)o->dst) &&
		    (o->link < 0 || uses_link(&l->p->routes[k],
		    (size_t)o->link));
	}
	ln = &l->m->links[k];
	return (o->link < 0 || k == (size_t)o->link) &&
	    (o->node < 0 || ln->a == (size_t)o->node ||
	    ln->b == (size_t)o->node);
}

/* The first matching index at or after from; l->n when none. */
static size_t
next_match(const struct plan_list *l, size_t from)
{
	size_t k;

	if (l->o.kind == PLAN_LIST_LOADS && l->o.link >= 0)
		/* One link at most: no need to walk them all. */
		return from <= (size_t)l->o.link && (size_t)l->o.link < l->n &&
		    matches(l, (size_t)l->o.link) ? (size_t)l->o.link : l->n;
	for (k = from; k < l->n; k++)
		if (matches(l, k))
			return k;
	return l->n;
}

/* Renders the next step into the pending buffer; false on failure. */
static bool
step(struct plan_list *l)
{
	const struct plan_list_opts *o = &l->o;
	char num[64];
	size_t k;
	int r = 0;

	switch (l->state) {
	case HEAD:
		snprintf(num, sizeof(num), "%" PRId64, l->revision);
		put(l, "{\"revision\":");
		put(l, num);
		snprintf(num, sizeof(num), "%" PRId64, l->p != NULL ?
		    l->p->model_revision : l->m->revision);
		put(l, ",\"model_revision\":");
		put(l, num);
		put(l, o->kind == PLAN_LIST_ROUTES ? ",\"routes\":[" :
		    ",\"links\":[");
		l->state = ITEMS;
		return true;
	case ITEMS:
		k = o->limit > 0 && l->sent == o->limit ? l->n :
		    next_match(l, l->at);
		if (k == l->n) {
			l->state = TAIL;
			return true;
		}
		if (l->sent > 0)
			put(l, ",");
		r = o->kind == PLAN_LIST_ROUTES ?
		    codec_plan_route_text(l->m, l->p, k, &l->buf, &l->len,
		    &l->cap) :
		    codec_plan_link_text(l->m, l->p, k, &l->buf, &l->len,
		    &l->cap);
		l->sent++;
		l->at = k + 1;
		break;
	case TAIL:
		put(l, "]");
		if (o->kind == PLAN_LIST_LOADS) {
			put(l, ",\"max_utilization\":");
			if (l->p != NULL)
				r = codec_plan_num_text(l->p->max_util,
				    &l->buf, &l->len, &l->cap);
			else
				put(l, "null");
		}
		if (o->paged) {
			put(l, ",\"next\":");
			if (next_match(l, l->at) < l->n) {
				snprintf(num, sizeof(num),
				    "\"%" PRId64 ".%zu\"", l->revision,
				    l->at);
				put(l, num);
			} else {
				put(l, "null");
			}
		}
		put(l, "}");
		l->state = END;
		break;
	default:
		return false;
	}
	if (r != 0)
		log_err("plan list entry not rendered revision=%lld kind=%s "
		    "index=%zu", (long long)l->revision, o->kind ==
		    PLAN_LIST_ROUTES ? "routes" : "loads", l->at);
	return r == 0;
}

long
plan_list_fill(void *ctx, char *buf, size_t max)
{
	struct plan_list *l = ctx;
	size_t w = 0, n;

	while (w < max) {
		if (l->off < l->len) {
			n = l->len - l->off;
			if (n > max - w)
				n = max - w;
			memcpy(buf + w, l->buf + l->off, n);
			l->off += n;
			w += n;
			continue;
		}
		l->off = l->len = 0;
		if (l->state == END || !step(l)) {
			l->state = END;
			l->len = 0;
			break;
		}
	}
	return w > 0 ? (long)w : HTTP_FILL_END;
}
