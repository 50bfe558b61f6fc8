/* SPDX-License-Identifier: GPL-3.0-or-later */
/* weft-mpisweep: a survivability sweep of a model snapshot on MPI ranks. */

/*
 * DESIGN
 * Run as `mpirun -np N weft-mpisweep --snapshot FILE --kind KIND ...`
 * (docs/operations.md, "Sweeps on MPI").  Every rank:
 *   1. reads the options (all ranks see the same command line, so they
 *      all reach the same verdict; rank 0 says what was wrong);
 *   2. reads and decodes the snapshot file (api/codec_snapshot.h);
 *   3. solves the base model as weftd's solver thread does (the path
 *      formulation from nothing) and checks the plan against the
 *      snapshot's figures: that solve's kept master is the seed every
 *      scenario starts from, as the daemon's sweep starts from its live
 *      plan's seed;
 *   4. builds the scenarios of the kind (daemon/sweepset.c, the same
 *      code as weftd's sweeps) and solves its share (deal.c).
 * The ranks agree after steps 2 and 3 (MPI_Allreduce of the outcome), so
 * all stop together.  Rank 0 then makes the survivability report with
 * the daemon's own encoder (api/codec_sweep.c) and writes sweep.json (the
 * shape of GET /v1/sweeps/{id}), results.csv and links.csv into --out,
 * and with --db stores the sweep in weftd's database, where
 * GET /v1/sweeps/{id} finds it.  The database is written only by rank 0,
 * through storage/ (SQLite in WAL mode, so a running daemon may share
 * the file): the sweep is created "running" once the base check passed,
 * results are added in batches at most a second apart, and the final
 * state and report come last.  One thread per rank.
 *
 * Exit codes (docs/operations.md): 0 done; 1 bad command line; 2 the
 * snapshot cannot be read or is not a valid snapshot; 3 the base model
 * does not solve to the snapshot's plan; 4 the results could not be
 * written (files or database); 5 MPI or an internal failure.
 */

#include <sys/stat.h>
#include <sys/types.h>

#include <errno.h>
#include <math.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>

#include <mpi.h>

#include "deal.h"
#include "../sweepset.h"
#include "../base/clock.h"
#include "../base/err.h"
#include "../base/log.h"
#include "../base/xalloc.h"
#include "../engine/engine.h"
#include "../../api/codec_snapshot.h"
#include "../../api/codec_sweep.h"
#include "../../storage/db.h"

enum {
	EX_DONE = 0,
	EX_USAGE = 1,
	EX_SNAPSHOT = 2,
	EX_MISMATCH = 3,
	EX_OUTPUT = 4,
	EX_INTERNAL = 5,
};

#define SNAPSHOT_MAX	(1L << 30)	/* largest snapshot file, bytes */
#define FLUSH_MS	1000.0		/* database batches at most this far
					   apart, as weftd's */

struct args {
	const char *snapshot;	/* borrowed from argv */
	const char *kind;
	const char *out;	/* directory; NULL: none */
	const char *db;		/* weftd's database; NULL: none */
	double scale;		/* every demand rate times this */
	double time_limit_s;	/* per scenario */
	double tolerance;	/* relative, for the base check */
	bool quiet;
};

struct run {
	int rank, ranks;
	struct args a;
	struct snapshot snap;
	struct plan *base;	/* the base model's plan */
	struct engine_seed *sd;	/* its seed; NULL when solved node-arc */
	struct sweepset set;
	struct deal deal;
	/* Rank 0 with --db: */
	struct db *db;
	int64_t id;
	size_t *pend, n_pend;
	double last_flush, t0;	/* ms */
	bool db_failed;
};

static const char usage_text[] =
    "usage: mpirun [mpirun options] weft-mpisweep --snapshot FILE\n"
    "           --kind links|nodes|srlgs|link-pairs [--out DIR] [--db FILE]\n"
    "           [--scale F] [--time-limit S] [--tolerance T] [--quiet]\n";

/* A message for people, on rank 0 only unless every is set. */
static void
say(const struct run *rn, bool every, const char *fmt, ...)
    __attribute__((format(printf, 3, 4)));

static void
say(const struct run *rn, bool every, const char *fmt, ...)
{
	va_list ap;

	if (rn->rank != 0 && !every)
		return;
	if (rn->rank != 0)
		fprintf(stderr, "weft-mpisweep[%d]: ", rn->rank);
	else
		fprintf(stderr, "weft-mpisweep: ");
	va_start(ap, fmt);
	vfprintf(stderr, fmt, ap);
	va_end(ap);
	fputc('\n', stderr);
}

/* ---- options ---- */

/* A finite number in [lo, hi] ((lo, hi] when lo_open). */
static int
number(const struct run *rn, const char *opt, const char *v, double lo,
    bool lo_open, double hi, double *xp)
{
	char *end;
	double x;

	errno = 0;
	x = strtod(v, &end);
	if (v[0] == '\0' || *end != '\0' || errno != 0 || !isfinite(x) ||
	    x < lo || x > hi || (lo_open && x == lo)) {
		say(rn, false, "%s: \"%s\" must be a number %s %g and <= %g",
		    opt, v, lo_open ? ">" : ">=", lo, hi);
		return EX_USAGE;
	}
	*xp = x;
	return 0;
}

static int
parse(struct run *rn, int argc, char **argv)
{
	static const char *const kinds[] = { "links", "nodes", "srlgs",
		"link-pairs" };
	struct args *a = &rn->a;
	const char *opt, *v;
	size_t k;
	int i, r;

	a->scale = 1;
	a->time_limit_s = 30;	/* weftd's whatif_time_limit_s default */
	a->tolerance = 1e-6;
	for (i = 1; i < argc; i++) {
		opt = argv[i];
		if (strcmp(opt, "--help") == 0 || strcmp(opt, "-h") == 0) {
			if (rn->rank == 0)
				fputs(usage_text, stdout);
			return -1;
		}
		if (strcmp(opt, "--quiet") == 0) {
			a->quiet = true;
			continue;
		}
		if (strcmp(opt, "--snapshot") != 0 && strcmp(opt, "--kind") != 0 &&
		    strcmp(opt, "--out") != 0 && strcmp(opt, "--db") != 0 &&
		    strcmp(opt, "--scale") != 0 &&
		    strcmp(opt, "--time-limit") != 0 &&
		    strcmp(opt, "--tolerance") != 0) {
			say(rn, false, "unknown option or argument \"%s\"", opt);
			goto usage;
		}
		if (i + 1 >= argc || argv[i + 1][0] == '\0') {
			say(rn, false, "%s needs a value", opt);
			goto usage;
		}
		v = argv[++i];
		if (strcmp(opt, "--snapshot") == 0 ? a->snapshot != NULL :
		    strcmp(opt, "--kind") == 0 ? a->kind != NULL :
		    strcmp(opt, "--out") == 0 ? a->out != NULL :
		    strcmp(opt, "--db") == 0 ? a->db != NULL : false) {
			say(rn, false, "%s given twice", opt);
			goto usage;
		}
		r = 0;
		if (strcmp(opt, "--snapshot") == 0)
			a->snapshot = v;
		else if (strcmp(opt, "--kind") == 0)
			a->kind = v;
		else if (strcmp(opt, "--out") == 0)
			a->out = v;
		else if (strcmp(opt, "--db") == 0)
			a->db = v;
		else if (strcmp(opt, "--scale") == 0)	/* as POST /v1/sweeps */
			r = number(rn, opt, v, 0, false, 1e6, &a->scale);
		else if (strcmp(opt, "--time-limit") == 0)
			r = number(rn, opt, v, 0, true, 86400,
			    &a->time_limit_s);
		else
			r = number(rn, opt, v, 0, false, 1, &a->tolerance);
		if (r != 0)
			goto usage;
	}
	if (a->snapshot == NULL || a->kind == NULL) {
		say(rn, false, "--snapshot and --kind are required");
		goto usage;
	}
	for (k = 0; k < sizeof(kinds) / sizeof(kinds[0]); k++)
		if (strcmp(a->kind, kinds[k]) == 0)
			break;
	if (k == sizeof(kinds) / sizeof(kinds[0])) {
		say(rn, false, "--kind: \"%s\" must be links, nodes, srlgs or "
		    "link-pairs", a->kind);
		goto usage;
	}
	if (a->out == NULL && a->db == NULL) {
		say(rn, false, "nowhere to put the results: give --out DIR, "
		    "--db FILE or both");
		goto usage;
	}
	return 0;
usage:
	if (rn->rank == 0)
		fputs(usage_text, stderr);
	return EX_USAGE;
}

/* ---- agreeing ---- */

/* The largest of every rank's code: all ranks go on only when all can. */
static int
agree(int code)
{
	int all = EX_INTERNAL;

	if (MPI_Allreduce(&code, &all, 1, MPI_INT, MPI_MAX, MPI_COMM_WORLD) !=
	    MPI_SUCCESS)
		return EX_INTERNAL;
	return all;
}

/* ---- the snapshot and the base solve ---- */

static int
read_snapshot(struct run *rn)
{
	struct err e = { 0 };
	FILE *f;
	char *text = NULL;
	long len;
	int r = EX_SNAPSHOT;

	if ((f = fopen(rn->a.snapshot, "rb")) == NULL) {
		say(rn, true, "%s: %s", rn->a.snapshot, strerror(errno));
		return EX_SNAPSHOT;
	}
	if (fseek(f, 0, SEEK_END) != 0 || (len = ftell(f)) < 0 ||
	    fseek(f, 0, SEEK_SET) != 0) {
		say(rn, true, "%s: cannot tell its size", rn->a.snapshot);
		goto out;
	}
	if (len > SNAPSHOT_MAX) {
		say(rn, true, "%s: larger than %ld bytes", rn->a.snapshot,
		    SNAPSHOT_MAX);
		goto out;
	}
	text = xmalloc((size_t)len + 1);
	if (fread(text, 1, (size_t)len, f) != (size_t)len) {
		say(rn, true, "%s: cannot read it", rn->a.snapshot);
		goto out;
	}
	text[len] = '\0';
	if (codec_snapshot_decode(text, (size_t)len, &rn->snap, &e) != 0) {
		say(rn, true, "%s: not a valid snapshot: %s%s%s",
		    rn->a.snapshot, e.where, e.where[0] != '\0' ? ": " : "",
		    e.msg);
		goto out;
	}
	r = 0;
out:
	free(text);
	fclose(f);
	return r;
}

/* Whether x and y agree within tol relative to the larger (or 1). */
static bool
near(double x, double y, double tol)
{
	double s = fmax(1, fmax(fabs(x), fabs(y)));

	return fabs(x - y) <= tol * s;
}

/* Solves the base model as the daemon's solver thread does; checks it. */
static int
solve_base(struct run *rn)
{
	const struct snapshot *s = &rn->snap;
	struct engine_state *st = NULL;
	struct solve_opts o;
	struct err e = { 0 };
	const struct plan *p;
	const char *form;
	int r;

	solve_opts_default(&o);
	if (s->model->policy.formulation == FORM_PATH)
		r = engine_solve_warm(&st, s->model, &o, &rn->base, &e);
	else
		r = engine_solve(s->model, &o, &rn->base, &e);
	if (r != 0) {
		say(rn, true, "the base model does not solve: %s: %s",
		    err_word(r), e.msg);
		engine_state_free(st);
		return EX_MISMATCH;
	}
	p = rn->base;
	if (p->formulation == FORM_PATH)
		rn->sd = engine_seed_take(st);
	engine_state_free(st);
	form = formulation_word(p->formulation);
	if (strcmp(plan_status_str(p->status), s->plan_status) != 0 ||
	    form == NULL || strcmp(form, s->formulation) != 0 ||
	    !near(p->max_util, s->max_util, rn->a.tolerance) ||
	    !near(p->carried_bps, s->carried_bps, rn->a.tolerance) ||
	    !near(p->unserved_bps, s->unserved_bps, rn->a.tolerance) ||
	    !near(p->total_cost, s->total_cost, rn->a.tolerance)) {
		say(rn, false, "the base model solves to status %s (%s), max "
		    "utilization %.17g, carried %.17g bit/s, unserved %.17g "
		    "bit/s, cost %.17g; the snapshot's plan %lld says %s "
		    "(%s), %.17g, %.17g, %.17g, %.17g (tolerance %g)",
		    plan_status_str(p->status), form != NULL ? form : "?",
		    p->max_util, p->carried_bps, p->unserved_bps,
		    p->total_cost, (long long)s->plan_revision,
		    s->plan_status, s->formulation, s->max_util,
		    s->carried_bps, s->unserved_bps, s->total_cost,
		    rn->a.tolerance);
		return EX_MISMATCH;
	}
	return 0;
}

/* ---- the scenarios ---- */

static void
eval(void *ctx, size_t i, struct db_sweep_result *res, double *worst,
    long *worst_idx)
{
	struct run *rn = ctx;
	struct plan *p = NULL;

	sweepset_eval(&rn->set, i, rn->snap.model, rn->sd, rn->a.scale,
	    rn->a.time_limit_s, res, &p);
	sweepset_worst(worst, worst_idx, p, (long)i);
	plan_free(p);
}

/* Writes the results not yet stored; rank 0 with --db. */
static void
flush(struct run *rn)
{
	struct db_sweep_result *rs;
	struct err e = { 0 };
	size_t k, done = 0;

	if (rn->n_pend == 0 || rn->db_failed)
		return;
	rs = xcalloc(rn->n_pend, sizeof(*rs));
	for (k = 0; k < rn->n_pend; k++)
		rs[k] = rn->deal.all[rn->pend[k]];
	for (k = 0; k < rn->set.n; k++)
		done += rn->deal.all[k].fail_json != NULL;
	if (db_sweep_progress(rn->db, rn->id, (long)done,
	    (clock_ms() - rn->t0) / 1e3, rs, rn->n_pend, &e) != 0) {
		say(rn, false, "%s: results not stored: %s", rn->a.db, e.msg);
		rn->db_failed = true;
	}
	free(rs);
	rn->n_pend = 0;
	rn->last_flush = clock_ms();
}

static void
progress(void *ctx, size_t i)
{
	struct run *rn = ctx;

	if (rn->db == NULL)
		return;
	rn->pend[rn->n_pend++] = i;
	if (clock_ms() - rn->last_flush >= FLUSH_MS)
		flush(rn);
}

/* ---- the results ---- */

static int
write_file(const struct run *rn, const char *name, const char *text,
    size_t len)
{
	char path[4096], tmp[4200];
	FILE *f;
	bool ok;

	snprintf(path, sizeof(path), "%s/%s", rn->a.out, name);
	snprintf(tmp, sizeof(tmp), "%s.tmp", path);
	if ((f = fopen(tmp, "wb")) == NULL) {
		say(rn, false, "%s: %s", tmp, strerror(errno));
		return EX_OUTPUT;
	}
	ok = fwrite(text, 1, len, f) == len;
	ok = fclose(f) == 0 && ok;
	if (!ok || rename(tmp, path) != 0) {
		say(rn, false, "%s: cannot write it", path);
		remove(tmp);
		return EX_OUTPUT;
	}
	return 0;
}

/* sweep.json, results.csv and links.csv into --out. */
static int
write_out(struct run *rn, const struct db_sweep *s)
{
	char *text;
	size_t len;
	int r;

	if (mkdir(rn->a.out, 0755) != 0 && errno != EEXIST) {
		say(rn, false, "%s: %s", rn->a.out, strerror(errno));
		return EX_OUTPUT;
	}
	text = codec_sweep_encode(s, rn->deal.all, rn->set.n, false,
	    (long)rn->set.n, s->elapsed_s, &len);
	if (text == NULL) {
		say(rn, false, "cannot encode the sweep");
		return EX_INTERNAL;
	}
	r = write_file(rn, "sweep.json", text, len);
	free(text);
	if (r != 0)
		return r;
	text = codec_sweep_results_csv(rn->deal.all, rn->set.n, &len);
	r = write_file(rn, "results.csv", text, len);
	free(text);
	if (r != 0)
		return r;
	text = codec_sweep_links_csv(s, &len);
	r = write_file(rn, "links.csv", text, len);
	free(text);
	return r;
}

/* Rank 0 with --db: opens the database and creates the sweep. */
static int
db_start(struct run *rn, const char *params)
{
	struct err e = { 0 };
	struct stat st;

	/* A mistyped path must not become a new, empty database. */
	if (stat(rn->a.db, &st) != 0) {
		say(rn, false, "%s: %s (weftd makes its database)", rn->a.db,
		    strerror(errno));
		return EX_OUTPUT;
	}
	if (!S_ISREG(st.st_mode)) {
		say(rn, false, "%s: not a database file", rn->a.db);
		return EX_OUTPUT;
	}
	if (db_open_tool(rn->a.db, &rn->db, &e) != 0 ||
	    db_sweep_create(rn->db, rn->a.kind, rn->snap.model_revision,
	    rn->snap.plan_revision, (long)rn->set.n, params, &rn->id,
	    &e) != 0) {
		say(rn, false, "%s: %s", rn->a.db, e.msg);
		db_close(rn->db);
		rn->db = NULL;
		return EX_OUTPUT;
	}
	rn->pend = xcalloc(rn->set.n + 1, sizeof(*rn->pend));
	return 0;
}

/* The sweep's record when it is not stored, as the database would hold
   it, started at t_start; takes report. */
static void
record(const struct run *rn, time_t t_start, double elapsed_s,
    const char *params, char *report, struct db_sweep *s)
{
	time_t t = time(NULL);
	struct tm tm;

	memset(s, 0, sizeof(*s));
	snprintf(s->kind, sizeof(s->kind), "%s", rn->a.kind);
	snprintf(s->state, sizeof(s->state), "done");
	s->model_revision = rn->snap.model_revision;
	s->plan_revision = rn->snap.plan_revision;
	s->total = s->done = (long)rn->set.n;
	s->elapsed_s = elapsed_s;
	strftime(s->created_at, sizeof(s->created_at), "%Y-%m-%dT%H:%M:%SZ",
	    gmtime_r(&t_start, &tm));
	strftime(s->finished_at, sizeof(s->finished_at),
	    "%Y-%m-%dT%H:%M:%SZ", gmtime_r(&t, &tm));
	s->params_json = xstrdup(params);
	s->report_json = report;
}

/*
 * Rank 0: the report, the database's final state, the files.  With --db
 * the files hold the stored record, as GET /v1/sweeps/{id} serves it.
 */
static int
finish(struct run *rn, const char *params, time_t t_start,
    double elapsed_s)
{
	const struct model *m = rn->snap.model;
	struct db_sweep *s = NULL;
	struct err e = { 0 };
	bool *have;
	char *report;
	size_t i;
	int r = 0, k;

	have = xcalloc(rn->set.n + 1, sizeof(*have));
	for (i = 0; i < rn->set.n; i++)
		have[i] = true;
	report = codec_sweep_report(m, rn->base, m->policy.headroom,
	    rn->deal.worst, rn->deal.worst_idx, rn->deal.all, have,
	    rn->set.n);
	free(have);
	if (report == NULL) {
		say(rn, false, "cannot encode the report");
		return EX_INTERNAL;
	}
	if (rn->db != NULL) {
		flush(rn);
		if (rn->db_failed)
			r = EX_OUTPUT;
		else if (db_sweep_finish(rn->db, rn->id, "done", elapsed_s,
		    report, NULL, &e) != 0 ||
		    db_sweep_get(rn->db, rn->id, &s, &e) != 0) {
			say(rn, false, "%s: the sweep's end not stored: %s",
			    rn->a.db, e.msg);
			r = EX_OUTPUT;
		}
	}
	/* Not stored (or the database failed): --out still gets it all. */
	if (s == NULL) {
		s = xcalloc(1, sizeof(*s));
		record(rn, t_start, elapsed_s, params, report, s);
		report = NULL;
	}
	if (rn->a.out != NULL && (k = write_out(rn, s)) != 0 && r == 0)
		r = k;
	free(report);
	db_sweep_free(s);
	return r;
}

/* ---- the whole run ---- */

static int
run(struct run *rn, int argc, char **argv)
{
	struct sweep_req sr;
	struct err e = { 0 };
	char *params = NULL;
	double t0;
	time_t t_start;
	int r, local;
	size_t k, failed = 0;

	if ((r = parse(rn, argc, argv)) != 0)
		return r < 0 ? EX_DONE : r;
	if ((r = agree(read_snapshot(rn))) != 0)
		return r;
	if ((r = agree(solve_base(rn))) != 0)
		return r;
	if (sweepset_build(rn->snap.model, rn->a.kind, &rn->set, &e) != 0) {
		say(rn, false, "%s", e.msg);	/* kinds were checked */
		return EX_INTERNAL;
	}
	memset(&sr, 0, sizeof(sr));
	snprintf(sr.kind, sizeof(sr.kind), "%s", rn->a.kind);
	sr.scale = rn->a.scale;
	sr.time_limit_s = rn->a.time_limit_s;
	params = codec_sweep_params(&sr);
	local = 0;
	if (rn->rank == 0 && rn->a.db != NULL)
		local = db_start(rn, params);
	if ((r = agree(local)) != 0)
		goto out;
	if (!rn->a.quiet)
		say(rn, false, "%s sweep of model revision %lld (plan %lld): "
		    "%zu scenarios on %d ranks", rn->a.kind,
		    (long long)rn->snap.model_revision,
		    (long long)rn->snap.plan_revision, rn->set.n, rn->ranks);
	rn->deal.n = rn->set.n;
	rn->deal.n_arcs = 2 * rn->snap.model->n_links;
	rn->deal.labels = rn->set.fail_json;
	rn->deal.eval = eval;
	rn->deal.progress = progress;
	rn->deal.ctx = rn;
	t0 = rn->t0 = rn->last_flush = clock_ms();
	t_start = time(NULL);
	if (deal_run(&rn->deal) != 0) {
		say(rn, true, "MPI failed while the scenarios were dealt");
		r = EX_INTERNAL;
		goto out;
	}
	if (rn->rank != 0) {
		r = 0;
		goto out;
	}
	r = finish(rn, params, t_start, (clock_ms() - t0) / 1e3);
	for (k = 0; k < rn->set.n; k++)
		failed += strcmp(rn->deal.all[k].status, "failed") == 0;
	if (!rn->a.quiet && rn->db != NULL)
		say(rn, false, "done: %zu scenarios (%zu failed) in %.2f s; "
		    "sweep %lld in %s", rn->set.n, failed,
		    (clock_ms() - t0) / 1e3, (long long)rn->id, rn->a.db);
	else if (!rn->a.quiet)
		say(rn, false, "done: %zu scenarios (%zu failed) in %.2f s",
		    rn->set.n, failed, (clock_ms() - t0) / 1e3);
	if (!rn->a.quiet && rn->ranks > 1) {
		fprintf(stderr, "weft-mpisweep: scenarios per rank:");
		for (k = 0; k < (size_t)rn->ranks; k++)
			fprintf(stderr, " %ld", rn->deal.per_rank[k]);
		fputc('\n', stderr);
	}
	if (rn->db != NULL && r == 0)
		printf("%lld\n", (long long)rn->id);
out:
	free(params);
	return r;
}

int
main(int argc, char **argv)
{
	struct run rn;
	int r;

	memset(&rn, 0, sizeof(rn));
	if (MPI_Init(&argc, &argv) != MPI_SUCCESS) {
		fprintf(stderr, "weft-mpisweep: MPI_Init failed\n");
		return EX_INTERNAL;
	}
	MPI_Comm_rank(MPI_COMM_WORLD, &rn.rank);
	MPI_Comm_size(MPI_COMM_WORLD, &rn.ranks);
	log_set_level(LOG_LVL_WARN);
	r = run(&rn, argc, argv);
	deal_free(&rn.deal);
	sweepset_clear(&rn.set);
	engine_seed_free(rn.sd);
	plan_free(rn.base);
	codec_snapshot_clear(&rn.snap);
	free(rn.pend);
	db_close(rn.db);
	engine_thread_done();
	MPI_Finalize();
	return r;
}
