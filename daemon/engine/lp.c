/* SPDX-License-Identifier: GPL-3.0-or-later */
/* The GLPK wrapper: problem building, simplex, read-out, export. */

/*
 * DESIGN
 * The only file that includes glpk.h.  Index translation (ours from 0,
 * GLPK's from 1) and argument checks happen here, because an invalid
 * GLPK call aborts the process.  GLPK's terminal output arrives in pieces
 * through glp_term_hook(); a per-thread buffer joins the pieces into
 * lines, which go to the log at debug level when the running call asked
 * for verbose output and are dropped otherwise.  Presolving is off, so
 * every solve starts from the basis the previous one left: that is what
 * makes the staged objectives of a formulation cheap.
 */

#include <assert.h>
#include <math.h>
#include <stdint.h>
#include <stdlib.h>
#include <string.h>

#include <glpk.h>

#include "lp.h"
#include "../base/clock.h"
#include "../base/err.h"
#include "../base/fault.h"
#include "../base/log.h"
#include "../base/xalloc.h"

struct lp {
	glp_prob *P;		/* owned */
};

/* ---- terminal output ---- */

static _Thread_local bool term_verbose;
static _Thread_local char term_line[512];
static _Thread_local size_t term_len;

static void
term_flush(void)
{
	if (term_len > 0 && term_verbose)
		log_debug("glpk: %.*s", (int)term_len, term_line);
	term_len = 0;
}

/* Returns non-zero: GLPK must not print anything itself. */
static int
term_hook(void *info, const char *s)
{
	(void)info;
	for (; *s != '\0'; s++) {
		if (*s == '\n') {
			term_flush();
			continue;
		}
		if (term_len == sizeof(term_line) - 1)
			term_flush();
		term_line[term_len++] = *s;
	}
	return 1;
}

static void
term_begin(bool verbose)
{
	glp_term_hook(term_hook, NULL);
	term_verbose = verbose;
	term_len = 0;
}

static void
term_end(void)
{
	term_flush();
	term_verbose = false;
}

void
lp_thread_done(void)
{
	glp_free_env();
}

/* ---- building ---- */

struct lp *
lp_new(const char *name)
{
	struct lp *lp = xcalloc(1, sizeof(*lp));

	/* Before any other call, so nothing reaches the terminal. */
	term_begin(false);
	lp->P = glp_create_prob();
	if (name != NULL)
		glp_set_prob_name(lp->P, name);
	glp_set_obj_dir(lp->P, GLP_MIN);
	return lp;
}

void
lp_free(struct lp *lp)
{
	if (lp == NULL)
		return;
	glp_delete_prob(lp->P);
	free(lp);
}

int
lp_add_rows(struct lp *lp, int n)
{
	assert(n >= 1);
	return glp_add_rows(lp->P, n) - 1;
}

int
lp_add_cols(struct lp *lp, int n)
{
	assert(n >= 1);
	return glp_add_cols(lp->P, n) - 1;
}

int
lp_n_rows(const struct lp *lp)
{
	return glp_get_num_rows(lp->P);
}

int
lp_n_cols(const struct lp *lp)
{
	return glp_get_num_cols(lp->P);
}

/* Maps (lo, hi) to GLPK's bound type. */
static int
bound_type(double lo, double hi)
{
	assert(!isnan(lo) && !isnan(hi) && lo <= hi);
	assert(lo < INFINITY && hi > -INFINITY);
	if (lo == -INFINITY && hi == INFINITY)
		return GLP_FR;
	if (hi == INFINITY)
		return GLP_LO;
	if (lo == -INFINITY)
		return GLP_UP;
	return lo == hi ? GLP_FX : GLP_DB;
}

void
lp_set_row_bounds(struct lp *lp, int i, double lo, double hi)
{
	int t = bound_type(lo, hi);

	assert(i >= 0 && i < glp_get_num_rows(lp->P));
	glp_set_row_bnds(lp->P, i + 1, t, isfinite(lo) ? lo : 0,
	    isfinite(hi) ? hi : 0);
}

void
lp_set_col_bounds(struct lp *lp, int j, double lo, double hi)
{
	int t = bound_type(lo, hi);

	assert(j >= 0 && j < glp_get_num_cols(lp->P));
	glp_set_col_bnds(lp->P, j + 1, t, isfinite(lo) ? lo : 0,
	    isfinite(hi) ? hi : 0);
}

void
lp_set_row_name(struct lp *lp, int i, const char *name)
{
	assert(i >= 0 && i < glp_get_num_rows(lp->P));
	assert(name != NULL && name[0] != '\0' && strlen(name) <= 255);
	glp_set_row_name(lp->P, i + 1, name);
}

void
lp_set_col_name(struct lp *lp, int j, const char *name)
{
	assert(j >= 0 && j < glp_get_num_cols(lp->P));
	assert(name != NULL && name[0] != '\0' && strlen(name) <= 255);
	glp_set_col_name(lp->P, j + 1, name);
}

void
lp_set_obj(struct lp *lp, int j, double c)
{
	assert(j >= 0 && j < glp_get_num_cols(lp->P));
	assert(isfinite(c));
	glp_set_obj_coef(lp->P, j + 1, c);
}

void
lp_clear_obj(struct lp *lp)
{
	int j, n = glp_get_num_cols(lp->P);

	for (j = 1; j <= n; j++)
		glp_set_obj_coef(lp->P, j, 0.0);
}

void
lp_load_matrix(struct lp *lp, size_t n, const int *rows, const int *cols,
    const double *vals)
{
	int m = glp_get_num_rows(lp->P), nc = glp_get_num_cols(lp->P);
	int *ia, *ja;
	double *ar;
	size_t t;

	assert(n < (size_t)INT32_MAX);
	ia = xreallocarray(NULL, n + 1, sizeof(*ia));
	ja = xreallocarray(NULL, n + 1, sizeof(*ja));
	ar = xreallocarray(NULL, n + 1, sizeof(*ar));
	for (t = 0; t < n; t++) {
		assert(rows[t] >= 0 && rows[t] < m);
		assert(cols[t] >= 0 && cols[t] < nc);
		assert(isfinite(vals[t]));
		ia[t + 1] = rows[t] + 1;
		ja[t + 1] = cols[t] + 1;
		ar[t + 1] = vals[t];
	}
	/* GLPK itself rejects (by aborting) duplicate pairs: ours asserts. */
	assert(glp_check_dup(m, nc, (int)n, ia, ja) == 0);
	glp_load_matrix(lp->P, (int)n, ia, ja, ar);
	free(ia);
	free(ja);
	free(ar);
}

int
lp_add_row(struct lp *lp, int n, const int *cols, const double *vals,
    double lo, double hi)
{
	int nc = glp_get_num_cols(lp->P);
	int *ja, i, t;
	double *ar;

	assert(n >= 0);
	ja = xreallocarray(NULL, (size_t)n + 1, sizeof(*ja));
	ar = xreallocarray(NULL, (size_t)n + 1, sizeof(*ar));
	for (t = 0; t < n; t++) {
		assert(cols[t] >= 0 && cols[t] < nc);
		assert(isfinite(vals[t]));
		ja[t + 1] = cols[t] + 1;
		ar[t + 1] = vals[t];
	}
	i = glp_add_rows(lp->P, 1);
	glp_set_mat_row(lp->P, i, n, ja, ar);
	free(ja);
	free(ar);
	/* A new row's auxiliary variable is basic: the basis stays valid. */
	lp_set_row_bounds(lp, i - 1, lo, hi);
	return i - 1;
}

void
lp_set_row_stat(struct lp *lp, int i, enum lp_vstat s)
{
	assert(i >= 0 && i < glp_get_num_rows(lp->P));
	/* GLPK turns GLP_NL into the non-basic status the bounds allow. */
	glp_set_row_stat(lp->P, i + 1, s == LP_BASIC ? GLP_BS : GLP_NL);
}

void
lp_set_col_stat(struct lp *lp, int j, enum lp_vstat s)
{
	assert(j >= 0 && j < glp_get_num_cols(lp->P));
	glp_set_col_stat(lp->P, j + 1, s == LP_BASIC ? GLP_BS : GLP_NL);
}

void
lp_set_col_entries(struct lp *lp, int j, int n, const int *rows,
    const double *vals)
{
	int m = glp_get_num_rows(lp->P);
	int *ia, t;
	double *ar;

	assert(j >= 0 && j < glp_get_num_cols(lp->P) && n >= 0);
	ia = xreallocarray(NULL, (size_t)n + 1, sizeof(*ia));
	ar = xreallocarray(NULL, (size_t)n + 1, sizeof(*ar));
	for (t = 0; t < n; t++) {
		assert(rows[t] >= 0 && rows[t] < m);
		assert(isfinite(vals[t]));
		ia[t + 1] = rows[t] + 1;
		ar[t + 1] = vals[t];
	}
	glp_set_mat_col(lp->P, j + 1, n, ia, ar);
	free(ia);
	free(ar);
}

int
lp_add_cols_with(struct lp *lp, int n, const size_t *beg, const int *rows,
    const double *vals, const double *lo, const double *hi,
    const double *obj)
{
	int j0, t;

	assert(n >= 1);
	j0 = lp_add_cols(lp, n);
	for (t = 0; t < n; t++) {
		assert(beg[t + 1] >= beg[t] &&
		    beg[t + 1] - beg[t] < (size_t)INT32_MAX);
		lp_set_col_entries(lp, j0 + t, (int)(beg[t + 1] - beg[t]),
		    rows + beg[t], vals + beg[t]);
		lp_set_col_bounds(lp, j0 + t, lo[t], hi[t]);
		lp_set_obj(lp, j0 + t, obj[t]);
	}
	return j0;
}

bool
lp_row_is_basic(const struct lp *lp, int i)
{
	assert(i >= 0 && i < glp_get_num_rows(lp->P));
	return glp_get_row_stat(lp->P, i + 1) == GLP_BS;
}

bool
lp_col_is_basic(const struct lp *lp, int j)
{
	assert(j >= 0 && j < glp_get_num_cols(lp->P));
	return glp_get_col_stat(lp->P, j + 1) == GLP_BS;
}

struct lp_basis {
	int m, n;
	unsigned char *row, *col;	/* GLPK statuses */
};

struct lp_basis *
lp_basis_save(const struct lp *lp)
{
	struct lp_basis *b = xcalloc(1, sizeof(*b));
	int i;

	b->m = glp_get_num_rows(lp->P);
	b->n = glp_get_num_cols(lp->P);
	b->row = xcalloc((size_t)b->m + 1, 1);
	b->col = xcalloc((size_t)b->n + 1, 1);
	for (i = 1; i <= b->m; i++)
		b->row[i] = (unsigned char)glp_get_row_stat(lp->P, i);
	for (i = 1; i <= b->n; i++)
		b->col[i] = (unsigned char)glp_get_col_stat(lp->P, i);
	return b;
}

void
lp_basis_load(struct lp *lp, const struct lp_basis *b)
{
	int i;

	assert(b->m <= glp_get_num_rows(lp->P));
	assert(b->n <= glp_get_num_cols(lp->P));
	for (i = 1; i <= b->m; i++)
		glp_set_row_stat(lp->P, i, b->row[i]);
	for (i = 1; i <= b->n; i++)
		glp_set_col_stat(lp->P, i, b->col[i]);
}

void
lp_basis_free(struct lp_basis *b)
{
	if (b == NULL)
		return;
	free(b->row);
	free(b->col);
	free(b);
}

/* One row or column of a snapshot. */
struct snap_var {
	int type;		/* GLP_FR, GLP_LO, ... */
	double lo, hi;
	unsigned char stat;	/* GLP_BS, GLP_NL, ... */
	char *name;		/* owned, NULL when none */
};

struct lp_snap {
	char *name;
	int m, n;
	struct snap_var *row, *col;	/* 1-based, as GLPK */
	double *obj;		/* 0..n, [0] the constant */
	size_t *beg;		/* column j's entries: beg[j]..beg[j+1]-1 */
	int *ind;
	double *val;
};

static void
snap_var_take(struct snap_var *v, int type, double lo, double hi, int stat,
    const char *name)
{
	v->type = type;
	v->lo = lo;
	v->hi = hi;
	v->stat = (unsigned char)stat;
	v->name = name != NULL ? xstrdup(name) : NULL;
}

struct lp_snap *
lp_snap_take(const struct lp *lp)
{
	struct lp_snap *s = xcalloc(1, sizeof(*s));
	glp_prob *P = lp->P;
	const char *nm;
	size_t nz = 0, cap;
	int i, j, k, len, *ind;
	double *val;

	nm = glp_get_prob_name(P);
	s->name = xstrdup(nm != NULL ? nm : "");
	s->m = glp_get_num_rows(P);
	s->n = glp_get_num_cols(P);
	s->row = xcalloc((size_t)s->m + 1, sizeof(*s->row));
	s->col = xcalloc((size_t)s->n + 1, sizeof(*s->col));
	s->obj = xcalloc((size_t)s->n + 1, sizeof(*s->obj));
	s->beg = xcalloc((size_t)s->n + 2, sizeof(*s->beg));
	for (i = 1; i <= s->m; i++)
		snap_var_take(&s->row[i], glp_get_row_type(P, i),
		    glp_get_row_lb(P, i), glp_get_row_ub(P, i),
		    glp_get_row_stat(P, i), glp_get_row_name(P, i));
	ind = xcalloc((size_t)s->m + 1, sizeof(*ind));
	val = xcalloc((size_t)s->m + 1, sizeof(*val));
	cap = (size_t)s->n + 16;
	s->ind = xcalloc(cap, sizeof(*s->ind));
	s->val = xcalloc(cap, sizeof(*s->val));
	s->obj[0] = glp_get_obj_coef(P, 0);
	for (j = 1; j <= s->n; j++) {
		snap_var_take(&s->col[j], glp_get_col_type(P, j),
		    glp_get_col_lb(P, j), glp_get_col_ub(P, j),
		    glp_get_col_stat(P, j), glp_get_col_name(P, j));
		s->obj[j] = glp_get_obj_coef(P, j);
		len = glp_get_mat_col(P, j, ind, val);
		if (nz + (size_t)len > cap) {
			while (nz + (size_t)len > cap)
				cap *= 2;
			s->ind = xreallocarray(s->ind, cap, sizeof(*s->ind));
			s->val = xreallocarray(s->val, cap, sizeof(*s->val));
		}
		s->beg[j] = nz;
		for (k = 1; k <= len; k++) {
			s->ind[nz] = ind[k];
			s->val[nz++] = val[k];
		}
	}
	s->beg[s->n + 1] = nz;
	free(ind);
	free(val);
	return s;
}

struct lp *
lp_snap_build(const struct lp_snap *s)
{
	struct lp *lp = lp_new(s->name);
	glp_prob *P = lp->P;
	const struct snap_var *v;
	int i, j, k, len, *ind;
	double *val;

	if (s->m > 0)
		glp_add_rows(P, s->m);
	if (s->n > 0)
		glp_add_cols(P, s->n);
	ind = xcalloc((size_t)s->m + 1, sizeof(*ind));
	val = xcalloc((size_t)s->m + 1, sizeof(*val));
	for (i = 1; i <= s->m; i++) {
		v = &s->row[i];
		glp_set_row_bnds(P, i, v->type, v->lo, v->hi);
		if (v->name != NULL)
			glp_set_row_name(P, i, v->name);
		glp_set_row_stat(P, i, v->stat);
	}
	glp_set_obj_coef(P, 0, s->obj[0]);
	for (j = 1; j <= s->n; j++) {
		v = &s->col[j];
		glp_set_col_bnds(P, j, v->type, v->lo, v->hi);
		if (v->name != NULL)
			glp_set_col_name(P, j, v->name);
		glp_set_obj_coef(P, j, s->obj[j]);
		len = (int)(s->beg[j + 1] - s->beg[j]);
		/* GLPK reads ind[1..len] and val[1..len]. */
		for (k = 0; k < len; k++) {
			ind[k + 1] = s->ind[s->beg[j] + (size_t)k];
			val[k + 1] = s->val[s->beg[j] + (size_t)k];
		}
		if (len > 0)
			glp_set_mat_col(P, j, len, ind, val);
		glp_set_col_stat(P, j, v->stat);
	}
	free(ind);
	free(val);
	return lp;
}

void
lp_snap_free(struct lp_snap *s)
{
	int i;

	if (s == NULL)
		return;
	for (i = 1; i <= s->m; i++)
		free(s->row[i].name);
	for (i = 1; i <= s->n; i++)
		free(s->col[i].name);
	free(s->row);
	free(s->col);
	free(s->obj);
	free(s->beg);
	free(s->ind);
	free(s->val);
	free(s->name);
	free(s);
}

void
lp_scale(struct lp *lp)
{
	glp_scale_prob(lp->P, GLP_SF_AUTO);
}

/* ---- solving ---- */

static enum lp_status
status_of(int s)
{
	switch (s) {
	case GLP_OPT:
		return LP_OPTIMAL;
	case GLP_FEAS:
		return LP_FEASIBLE;
	case GLP_NOFEAS:
		return LP_INFEASIBLE;
	case GLP_UNBND:
		return LP_UNBOUNDED;
	default:
		return LP_UNDEFINED;
	}
}

/* One glp_simplex call with the given method; returns GLPK's code. */
static int
simplex(struct lp *lp, int meth, const struct lp_params *p, double t0)
{
	glp_smcp parm;
	double left;

	glp_init_smcp(&parm);
	parm.msg_lev = p->verbose ? GLP_MSG_ON : GLP_MSG_ERR;
	parm.meth = meth;
	parm.presolve = GLP_OFF;
	parm.out_frq = 5000;
	/*
	 * Rates span ten orders of magnitude (1 bit/s demands on 1e10 bit/s
	 * links, 1e-10 LP units): GLPK's default bound tolerance (1e-7)
	 * would let small demands' flows go negative and vanish.  1e-10
	 * keeps them; measured on brain-sized LPs, it costs no iterations.
	 */
	parm.tol_bnd = 1e-10;
	/*
	 * The dual simplex takes long steps (the bound-flipping ratio test):
	 * u and U are boxed, and on brain, janos-us-ca and ta2 it cut the
	 * iterations of a full solve by 14-19 % (tests/bench/engine_bench).
	 */
	if (meth != GLP_PRIMAL)
		parm.r_test = GLP_RT_FLIP;
	if (p->time_limit_s > 0) {
		left = p->time_limit_s * 1e3 - (clock_ms() - t0);
		if (left < 1)
			return GLP_ETMLIM;
		parm.tm_lim = left > INT32_MAX ? INT32_MAX : (int)left;
	}
	return glp_simplex(lp->P, &parm);
}

int
lp_solve(struct lp *lp, const struct lp_params *p, struct lp_result *res)
{
	double t0 = clock_ms();
	int it0, ret, r = ERR_INTERNAL;
#ifdef WEFT_FAULTS
	char fault_arg[16];
#endif

	memset(res, 0, sizeof(*res));
	res->status = LP_UNDEFINED;
#ifdef WEFT_FAULTS
	/* Test builds: "lp_solve:timeout" or "lp_solve" (a failure). */
	if (fault_hit("lp_solve", fault_arg, sizeof(fault_arg)))
		return strcmp(fault_arg, "timeout") == 0 ? ERR_TIMEOUT :
		    ERR_SOLVER;
#endif
	term_begin(p->verbose);
	it0 = glp_get_it_cnt(lp->P);
	ret = simplex(lp, p->method == LP_DUAL ? GLP_DUALP : GLP_PRIMAL, p,
	    t0);
	if (ret == GLP_EBADB || ret == GLP_ESING || ret == GLP_ECOND ||
	    ret == GLP_EFAIL) {
		/*
		 * The warm basis went bad (singular or ill-conditioned after
		 * bounds moved): start once more from an advanced basis.
		 */
		log_debug("lp retry from a fresh basis glpk_code=%d", ret);
		glp_adv_basis(lp->P, 0);
		ret = simplex(lp, GLP_PRIMAL, p, t0);
	}
	res->status = status_of(glp_get_status(lp->P));
	res->iterations = glp_get_it_cnt(lp->P) - it0;
	res->objective = glp_get_obj_val(lp->P);
	res->ms = clock_ms() - t0;
	switch (ret) {
	case 0:
		r = 0;
		break;
	case GLP_ETMLIM:
		r = ERR_TIMEOUT;
		break;
	default:
		log_debug("lp failed glpk_code=%d", ret);
		r = ERR_SOLVER;
		break;
	}
	term_end();
	return r;
}

double
lp_col_value(const struct lp *lp, int j)
{
	assert(j >= 0 && j < glp_get_num_cols(lp->P));
	return glp_get_col_prim(lp->P, j + 1);
}

double
lp_row_value(const struct lp *lp, int i)
{
	assert(i >= 0 && i < glp_get_num_rows(lp->P));
	return glp_get_row_prim(lp->P, i + 1);
}

double
lp_row_dual(const struct lp *lp, int i)
{
	assert(i >= 0 && i < glp_get_num_rows(lp->P));
	return glp_get_row_dual(lp->P, i + 1);
}

double
lp_col_dual(const struct lp *lp, int j)
{
	assert(j >= 0 && j < glp_get_num_cols(lp->P));
	return glp_get_col_dual(lp->P, j + 1);
}

double
lp_obj_value(const struct lp *lp)
{
	return glp_get_obj_val(lp->P);
}

/* ---- export ---- */

int
lp_write(struct lp *lp, const char *path, enum lp_format fmt, bool verbose)
{
	int ret;

	term_begin(verbose);
	if (fmt == LP_FMT_MPS)
		ret = glp_write_mps(lp->P, GLP_MPS_FILE, NULL, path);
	else
		ret = glp_write_lp(lp->P, NULL, path);
	term_end();
	return ret == 0 ? 0 : ERR_IO;
}
