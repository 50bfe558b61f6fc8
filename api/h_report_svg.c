/* SPDX-License-Identifier: GPL-3.0-or-later */
/* GET /v1/sweeps/{id}/report.svg: a sweep's report drawn as a bar chart. */

/*
 * DESIGN
 * The chart is drawn from the report stored with the sweep (the same text
 * GET /v1/sweeps/{id} embeds and links.csv is drawn from), so the three
 * can never disagree.  One horizontal bar per link direction of the
 * report (at most BARS_MAX, the worst), worst utilisation first, on a
 * linear axis from 0 to xmax (the largest of 1, the headroom and every
 * bar, rounded up to a whole tick step); a dashed vertical line marks the
 * headroom, and bars beyond it are drawn in a second colour (blue and
 * orange, a pair people with the common colour-vision deficiencies tell
 * apart, by lightness too).  The
 * geometry is fixed (docs/api.md): the plot starts at x = PLOT_X and is
 * PLOT_W wide, so a value u sits at PLOT_X + PLOT_W * u / xmax; every
 * tick carries its value in data-value.  Ids are text from clients:
 * every text node and attribute is XML-escaped, and bytes that are not
 * well-formed UTF-8 become '?'.  Runs on an HTTP thread; the SVG is
 * written with open_memstream() and handed to the reply.
 */

#include <errno.h>
#include <math.h>
#include <stdbool.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "handlers.h"
#include "../daemon/base/err.h"
#include "../daemon/base/xalloc.h"
#include "../daemon/service.h"
#include "../storage/db.h"
#include "codec_report.h"
#include "http.h"
#include "reply.h"

#define WIDTH		960	/* the whole chart, px */
#define PLOT_X		300	/* left edge of the plot (labels left of it) */
#define PLOT_W		570	/* plot width; the values right of it */
#define PLOT_Y		84	/* top of the first bar row */
#define ROW_H		18	/* one bar's row */
#define BAR_H		12	/* one bar */
#define BOTTOM_H	64	/* below the plot: ticks, axis title, legend */
#define LABEL_CP	24	/* code points of an id shown in a label */
#define BARS_MAX	10000	/* bars drawn; the rest are counted in a note */

#define COLOUR_OK	"#3b6ea5"	/* bars within the headroom */
#define COLOUR_OVER	"#d9822b"	/* bars above it */

/* Writes s XML-escaped; malformed UTF-8 bytes become '?'.  max code
   points (0: all), "\u2026" after a cut. */
static void
esc(FILE *f, const char *s, size_t max)
{
	const unsigned char *p = (const unsigned char *)s;
	size_t n, k, cp = 0;
	unsigned c;

	while (*p != '\0') {
		if (max > 0 && cp == max) {
			fputs("\xe2\x80\xa6", f);
			return;
		}
		c = *p;
		n = c < 0x80 ? 1 : (c & 0xe0) == 0xc0 && c >= 0xc2 ? 2 :
		    (c & 0xf0) == 0xe0 ? 3 : (c & 0xf8) == 0xf0 && c <= 0xf4 ?
		    4 : 0;
		for (k = 1; k < n; k++)
			if ((p[k] & 0xc0) != 0x80)
				n = 0;
		/* Overlong 3- and 4-byte forms, surrogates, past U+10FFFF. */
		if ((n == 3 && ((c == 0xe0 && p[1] < 0xa0) ||
		    (c == 0xed && p[1] >= 0xa0))) ||
		    (n == 4 && ((c == 0xf0 && p[1] < 0x90) ||
		    (c == 0xf4 && p[1] >= 0x90))))
			n = 0;
		cp++;
		if (n == 0 || (n == 1 && c < 0x20 && c != '\t')) {
			fputc('?', f);
			p++;
			continue;
		}
		if (n > 1) {
			fwrite(p, 1, n, f);
			p += n;
			continue;
		}
		switch (c) {
		case '&': fputs("&amp;", f); break;
		case '<': fputs("&lt;", f); break;
		case '>': fputs("&gt;", f); break;
		case '"': fputs("&quot;", f); break;
		case '\'': fputs("&apos;", f); break;
		default: fputc((int)c, f); break;
		}
		p++;
	}
}

/* A rate for people: "9.92 Gbit/s". */
static void
rate(FILE *f, double bps)
{
	static const char *const pre[] = { "", "k", "M", "G", "T", "P" };
	size_t i = 0;

	if (!isfinite(bps)) {
		fputs("n/a", f);
		return;
	}
	while (fabs(bps) >= 1000 && i + 1 < sizeof(pre) / sizeof(pre[0])) {
		bps /= 1000;
		i++;
	}
	fprintf(f, "%.3g %sbit/s", bps, pre[i]);
}

static void
pct(FILE *f, double u)
{
	if (isfinite(u))
		fprintf(f, "%.1f %%", 100 * u);
	else
		fputs("n/a", f);
}

/* Bars worst first; NaN last; ties in the report's order. */
static int
cmp_dir(const void *x, const void *y)
{
	const struct report_dir *a = *(const struct report_dir *const *)x;
	const struct report_dir *b = *(const struct report_dir *const *)y;
	bool na = !isfinite(a->worst_util), nb = !isfinite(b->worst_util);

	if (na != nb)
		return na ? 1 : -1;
	if (!na && a->worst_util != b->worst_util)
		return a->worst_util < b->worst_util ? 1 : -1;
	return a < b ? -1 : a > b ? 1 : 0;
}

/* The tick step and the axis end for values up to top (> 0). */
static void
axis(double top, double *stepp, double *xmaxp)
{
	static const double steps[] = { 0.1, 0.2, 0.25, 0.5 };
	double mul = 1, step = 0.1;
	size_t i = 0;

	/* At most 12 ticks; the steps go on as 1, 2, 2.5, 5, 10, ... */
	for (;;) {
		step = steps[i] * mul;
		if (top / step <= 12 || step > 1e12)
			break;
		if (++i == sizeof(steps) / sizeof(steps[0])) {
			i = 0;
			mul *= 10;
		}
	}
	*stepp = step;
	*xmaxp = ceil(top / step - 1e-9) * step;
}

static double
xpos(double u, double xmax)
{
	return PLOT_X + PLOT_W * (isfinite(u) && u > 0 ? u : 0) / xmax;
}

/* Writes the chart of report rep of sweep s to f. */
static void
draw(FILE *f, const struct db_sweep *s, const struct report *rep)
{
	const struct report_dir **v;
	const struct report_dir *d;
	double top = 1, step, xmax, u, hr = rep->headroom, y, x;
	size_t i, n = rep->n_dirs, nt, left = 0;
	int height, plot_h;
	bool over;

	v = xcalloc(n + 1, sizeof(*v));
	for (i = 0; i < n; i++)
		v[i] = &rep->dirs[i];
	qsort(v, n, sizeof(*v), cmp_dir);
	/* Past BARS_MAX bars, the least loaded directions are left out. */
	if (n > BARS_MAX) {
		left = n - BARS_MAX;
		n = BARS_MAX;
	}
	plot_h = (int)(n > 0 ? n : 1) * ROW_H;
	for (i = 0; i < n; i++)
		if (isfinite(v[i]->worst_util) && v[i]->worst_util > top)
			top = v[i]->worst_util;
	if (isfinite(hr) && hr > top)
		top = hr;
	axis(top, &step, &xmax);
	height = PLOT_Y + plot_h + BOTTOM_H + (left > 0 ? 20 : 0);

	fprintf(f, "<?xml version=\"1.0\" encoding=\"UTF-8\"?>\n"
	    "<svg xmlns=\"http://www.w3.org/2000/svg\" version=\"1.1\" "
	    "width=\"%d\" height=\"%d\" viewBox=\"0 0 %d %d\" "
	    "font-family=\"DejaVu Sans, Liberation Sans, Arial, sans-serif\" "
	    "font-size=\"11\" role=\"img\" aria-labelledby=\"title\" "
	    "data-plot-x=\"%d\" data-plot-width=\"%d\" data-xmax=\"%.17g\">\n",
	    WIDTH, height, WIDTH, height, PLOT_X, PLOT_W, xmax);
	fprintf(f, "<title id=\"title\">Sweep %lld (", (long long)s->id);
	esc(f, s->kind, 0);
	fputs("): worst-case utilisation per link direction</title>\n", f);
	fprintf(f, "<rect width=\"%d\" height=\"%d\" fill=\"#ffffff\"/>\n",
	    WIDTH, height);

	/* Title and the sweep in one line. */
	fprintf(f, "<text class=\"title\" x=\"16\" y=\"26\" font-size=\"16\" "
	    "font-weight=\"bold\">Sweep %lld (", (long long)s->id);
	esc(f, s->kind, 0);
	fputs("): worst-case utilisation per link direction</text>\n", f);
	fprintf(f, "<text class=\"subtitle\" x=\"16\" y=\"46\" "
	    "fill=\"#333333\">%ld of %ld scenarios, ", s->done, s->total);
	esc(f, s->state, 0);
	fputs("; worst maximum utilisation ", f);
	pct(f, rep->worst_max_util);
	if (rep->worst_max_index >= 0)
		fprintf(f, " (scenario %ld)", rep->worst_max_index);
	fprintf(f, "; %zu scenario%s leave traffic unserved</text>\n",
	    rep->n_unserved, rep->n_unserved == 1 ? "" : "s");

	/* Grid and ticks. */
	fputs("<g class=\"axis\" stroke=\"#d0d0d0\">\n", f);
	nt = (size_t)llround(xmax / step);
	for (i = 0; i <= nt; i++) {
		u = (double)i * step;
		x = xpos(u, xmax);
		fprintf(f, "<line class=\"tick\" data-value=\"%.17g\" "
		    "x1=\"%.2f\" x2=\"%.2f\" y1=\"%d\" y2=\"%d\"/>\n", u, x, x,
		    PLOT_Y - 4, PLOT_Y + plot_h + 4);
	}
	/* Tick labels below the plot, and above it for long charts. */
	fputs("</g>\n<g class=\"tick-labels\" text-anchor=\"middle\" "
	    "fill=\"#333333\">\n", f);
	for (i = 0; i <= nt; i++) {
		u = (double)i * step;
		fprintf(f, "<text class=\"tick-label\" data-value=\"%.17g\" "
		    "x=\"%.2f\" y=\"%d\">%g %%</text>\n", u, xpos(u, xmax),
		    PLOT_Y + plot_h + 18, 100 * u);
		if (n > 20)
			fprintf(f, "<text class=\"tick-label top\" "
			    "data-value=\"%.17g\" x=\"%.2f\" y=\"%d\">%g %%"
			    "</text>\n", u, xpos(u, xmax), PLOT_Y - 8, 100 * u);
	}
	fputs("</g>\n", f);
	fprintf(f, "<text class=\"axis-title\" x=\"%d\" y=\"%d\" "
	    "text-anchor=\"middle\">worst-case utilisation (load / capacity) "
	    "over the sweep's scenarios</text>\n", PLOT_X + PLOT_W / 2,
	    PLOT_Y + plot_h + 36);
	fprintf(f, "<text class=\"axis-title\" x=\"16\" y=\"%d\" "
	    "font-weight=\"bold\">link direction (link, from \xe2\x86\x92 "
	    "to)</text>\n", PLOT_Y - 10);

	/* One bar per link direction. */
	fputs("<g class=\"bars\">\n", f);
	for (i = 0; i < n; i++) {
		d = v[i];
		u = d->worst_util;
		over = isfinite(u) && isfinite(hr) && u > hr + 1e-9;
		y = PLOT_Y + (double)i * ROW_H;
		fputs("<g class=\"row\" data-link=\"", f);
		esc(f, d->link, 0);
		fputs("\" data-from=\"", f);
		esc(f, d->from, 0);
		fputs("\" data-to=\"", f);
		esc(f, d->to, 0);
		fprintf(f, "\" data-util=\"%.17g\">\n<title>", u);
		esc(f, d->link, 0);
		fputs(" ", f);
		esc(f, d->from, 0);
		fputs(" \xe2\x86\x92 ", f);
		esc(f, d->to, 0);
		fputs(": worst ", f);
		pct(f, u);
		fputs(", load ", f);
		rate(f, d->worst_load_bps);
		fputs(" of ", f);
		rate(f, d->capacity_bps);
		if (d->worst_index >= 0)
			fprintf(f, ", scenario %ld", d->worst_index);
		fprintf(f, "</title>\n<text class=\"label\" x=\"%d\" "
		    "y=\"%.2f\" text-anchor=\"end\">", PLOT_X - 6,
		    y + BAR_H - 2);
		esc(f, d->link, LABEL_CP);
		fputs(" ", f);
		esc(f, d->from, LABEL_CP);
		fputs("\xe2\x86\x92", f);
		esc(f, d->to, LABEL_CP);
		x = xpos(u, xmax);
		fprintf(f, "</text>\n<rect class=\"bar%s\" x=\"%d\" y=\"%.2f\" "
		    "width=\"%.2f\" height=\"%d\" fill=\"%s\"/>\n",
		    over ? " over" : "", PLOT_X, y, x - PLOT_X, BAR_H,
		    over ? COLOUR_OVER : COLOUR_OK);
		fprintf(f, "<text class=\"value\" x=\"%d\" y=\"%.2f\" "
		    "text-anchor=\"end\">", WIDTH - 12, y + BAR_H - 2);
		pct(f, u);
		fputs("</text>\n</g>\n", f);
	}
	if (n == 0)
		fprintf(f, "<text class=\"empty\" x=\"%d\" y=\"%d\">No link "
		    "direction carries traffic in any finished scenario."
		    "</text>\n", PLOT_X + 8, PLOT_Y + ROW_H - 4);
	if (left > 0)
		fprintf(f, "<text class=\"more\" x=\"16\" y=\"%d\">%zu "
		    "less loaded link directions are not drawn (links.csv has "
		    "them all).</text>\n", PLOT_Y + plot_h + 74, left);
	fputs("</g>\n", f);

	/* The headroom line, over the bars. */
	if (isfinite(hr)) {
		x = xpos(hr, xmax);
		fprintf(f, "<line class=\"headroom\" data-value=\"%.17g\" "
		    "x1=\"%.2f\" x2=\"%.2f\" y1=\"%d\" y2=\"%d\" "
		    "stroke=\"#1a1a1a\" stroke-width=\"2\" "
		    "stroke-dasharray=\"6 3\"/>\n", hr, x, x, n > 20 ?
		    PLOT_Y - 4 : PLOT_Y - 22, PLOT_Y + plot_h + 4);
		fprintf(f, "<text class=\"headroom-label\" x=\"%.2f\" y=\"%d\" "
		    "text-anchor=\"middle\" font-weight=\"bold\">headroom ",
		    x, PLOT_Y - 26);
		pct(f, hr);
		fputs("</text>\n", f);
	}

	/* Legend. */
	y = PLOT_Y + plot_h + 48;
	fprintf(f, "<g class=\"legend\">\n<rect x=\"%d\" y=\"%.2f\" "
	    "width=\"14\" height=\"10\" fill=\"" COLOUR_OK "\"/>\n"
	    "<text x=\"%d\" y=\"%.2f\">within the headroom</text>\n"
	    "<rect x=\"%d\" y=\"%.2f\" width=\"14\" height=\"10\" fill=\""
	    COLOUR_OVER "\"/>\n<text x=\"%d\" y=\"%.2f\">above the headroom"
	    "</text>\n</g>\n</svg>\n", PLOT_X, y, PLOT_X + 20, y + 9,
	    PLOT_X + 180, y, PLOT_X + 200, y + 9);
	free(v);
}

int
h_sweep_report_svg(struct req *rq, struct err *e)
{
	struct db_sweep *s = NULL;
	struct report *rep = NULL;
	struct db *db;
	FILE *f = NULL;
	char *text = NULL;
	size_t len = 0;
	int64_t id;
	bool bad;
	int r;

	if ((r = h_sweep_id(rq, &id, e)) != 0)
		return r;
	db = service_db_lock(rq->svc);
	r = db_sweep_get(db, id, &s, e);
	service_db_unlock(rq->svc);
	if (r == ERR_NOTFOUND)
		err_set(e, r, "id", "no sweep %lld", (long long)id);
	if (r != 0)
		goto out;
	if (s->report_json == NULL) {
		r = err_set(e, ERR_NOTFOUND, "id", "sweep %lld has no report "
		    "(state %s); a report is made when a sweep is done or "
		    "cancelled", (long long)id, s->state);
		goto out;
	}
	if ((r = codec_report_decode(s->report_json, &rep, e)) != 0)
		goto out;
	r = ERR_NOMEM;
	if ((f = open_memstream(&text, &len)) == NULL) {
		err_set(e, r, NULL, "open_memstream: %s", strerror(errno));
		goto out;
	}
	draw(f, s, rep);
	bad = ferror(f) != 0;
	bad = fclose(f) != 0 || bad;
	f = NULL;
	if (bad) {
		err_set(e, r, NULL, "cannot write the chart");
		goto out;
	}
	reply_text(rq, "image/svg+xml", text, len);
	text = NULL;
	r = 0;
out:
	if (f != NULL)
		fclose(f);
	free(text);
	codec_report_free(rep);
	db_sweep_free(s);
	return r;
}
