/* SPDX-License-Identifier: GPL-3.0-or-later */
/* A thin wrapper over GLPK's simplex: the only way the engine reaches GLPK. */
#ifndef WEFT_ENGINE_LP_H
#define WEFT_ENGINE_LP_H

/*
 * DESIGN
 * struct lp owns one GLPK problem object.  Rows and columns are numbered
 * from 0 here (GLPK counts from 1).  The objective is always minimised.
 * Bounds are given as (lo, hi) with -INFINITY / INFINITY for "none";
 * lo == hi fixes a row or column.  GLPK ends the process on an invalid
 * call, so every function asserts its indices and bounds: a failed
 * assertion is a bug in the caller, never bad input (formulations check
 * the model before building an LP).
 *
 * Threads: an lp lives within one engine call on one thread.  GLPK keeps
 * its environment (and the terminal hook this file installs) per thread.
 * GLPK's terminal output goes to the log at debug level while an lp call
 * with verbose set runs, and is discarded otherwise.
 */

#include <stdbool.h>
#include <stddef.h>

struct lp;

enum lp_method {
	LP_PRIMAL = 0,		/* primal simplex */
	LP_DUAL = 1,		/* dual simplex, primal if that fails */
};

enum lp_status {
	LP_OPTIMAL = 0,		/* optimal basic solution */
	LP_FEASIBLE = 1,	/* primal feasible, optimality not proven */
	LP_INFEASIBLE = 2,	/* no primal feasible solution */
	LP_UNBOUNDED = 3,	/* objective unbounded below */
	LP_UNDEFINED = 4,	/* nothing known (e.g. stopped in phase 1) */
};

enum lp_format {
	LP_FMT_LP = 0,		/* the LP text format */
	LP_FMT_MPS = 1,		/* free MPS */
};

struct lp_params {
	enum lp_method method;
	double time_limit_s;	/* 0: none */
	bool verbose;		/* GLPK's progress lines to the debug log */
};

struct lp_result {
	enum lp_status status;	/* OUT: GLPK's status after the call */
	int iterations;		/* OUT: simplex iterations of this call */
	double objective;	/* OUT: objective value (scaled LP units) */
	double ms;		/* OUT: wall time of this call */
};

/* Returns a new empty minimisation problem; name may be NULL. */
struct lp *lp_new(const char *name);

/* Frees lp and its GLPK problem; lp may be NULL. */
void lp_free(struct lp *lp);

/* Appends n >= 1 rows / columns (free, no entries); returns the first. */
int lp_add_rows(struct lp *lp, int n);
int lp_add_cols(struct lp *lp, int n);

/* Counts rows / columns. */
int lp_n_rows(const struct lp *lp);
int lp_n_cols(const struct lp *lp);

/* Sets bounds; lo <= hi, neither NaN, lo < INFINITY, hi > -INFINITY. */
void lp_set_row_bounds(struct lp *lp, int i, double lo, double hi);
void lp_set_col_bounds(struct lp *lp, int j, double lo, double hi);

/*
 * Names a row or column (for export).  name must be 1..255 bytes; GLPK
 * copies it.  Names with spaces make MPS unreadable: callers avoid them.
 */
void lp_set_row_name(struct lp *lp, int i, const char *name);
void lp_set_col_name(struct lp *lp, int j, const char *name);

/* Sets column j's objective coefficient; lp_clear_obj zeroes them all. */
void lp_set_obj(struct lp *lp, int j, double c);
void lp_clear_obj(struct lp *lp);

/*
 * Replaces the constraint matrix by n entries (rows[t], cols[t], vals[t]).
 * Indices must be in range and no (row, column) pair may repeat.
 */
void lp_load_matrix(struct lp *lp, size_t n, const int *rows,
    const int *cols, const double *vals);

/*
 * Appends one row with n entries (distinct columns) and bounds lo..hi,
 * keeping the current basis valid (the new row's slack is basic).
 * Returns the row's index.
 */
int lp_add_row(struct lp *lp, int n, const int *cols, const double *vals,
    double lo, double hi);

/* Where a variable sits in a basis. */
enum lp_vstat {
	LP_BASIC = 0,
	LP_NONBASIC = 1,	/* at its lower bound if any, else upper */
};

/*
 * Sets the basis status of a row's auxiliary variable or of a column, to
 * start the next lp_solve() from a basis the caller knows (a crash basis).
 * The caller keeps the number of basic variables equal to the number of
 * rows and the basis matrix non-singular; otherwise lp_solve() falls back
 * to a basis of its own.
 */
void lp_set_row_stat(struct lp *lp, int i, enum lp_vstat s);
void lp_set_col_stat(struct lp *lp, int j, enum lp_vstat s);

/*
 * Sets the entries of column j to n (row, value) pairs with distinct
 * rows, replacing any it had.
 */
void lp_set_col_entries(struct lp *lp, int j, int n, const int *rows,
    const double *vals);

/*
 * A saved basis: the statuses of all rows and columns.  lp_basis_load()
 * restores it into the same lp, which may have gained rows and columns
 * since (those keep their statuses: new rows basic, new columns not).
 */
struct lp_basis;
struct lp_basis *lp_basis_save(const struct lp *lp);
void lp_basis_load(struct lp *lp, const struct lp_basis *b);
void lp_basis_free(struct lp_basis *b);

/* Applies GLPK's automatic scaling; call once, after the matrix is loaded. */
/*
 * A snapshot of a whole problem in plain memory: rows and columns with
 * their bounds, names, objective and matrix, and the basis.  It holds no
 * GLPK object, so it may be made on one thread and built on another
 * (lp_snap_build() makes a new problem on the calling thread, with the
 * snapshot's basis, ready for a warm simplex).  lp_snap_free(NULL) is a
 * no-op.
 */
struct lp_snap;
struct lp_snap *lp_snap_take(const struct lp *lp);
struct lp *lp_snap_build(const struct lp_snap *s);
void lp_snap_free(struct lp_snap *s);

void lp_scale(struct lp *lp);

/*
 * Runs the simplex method from the current basis (the previous solve's,
 * or the standard basis at first).  Returns 0 when the simplex finished
 * (res->status says how: optimal, infeasible, ...), ERR_TIMEOUT when the
 * time limit passed (res->status tells whether a feasible basis exists),
 * ERR_SOLVER when GLPK failed (singular basis, numerical trouble), after
 * one retry from a fresh basis.
 */
int lp_solve(struct lp *lp, const struct lp_params *p,
    struct lp_result *res);

/*
 * Appends n >= 1 columns at once: column t has bounds lo[t]..hi[t],
 * objective coefficient obj[t] and the entries rows[beg[t] .. beg[t+1]-1],
 * vals[same] (distinct rows).  The columns are non-basic at their lower
 * bound, so a primal feasible basis stays primal feasible.  Returns the
 * first new column's index.
 */
int lp_add_cols_with(struct lp *lp, int n, const size_t *beg,
    const int *rows, const double *vals, const double *lo,
    const double *hi, const double *obj);

/* Where row i's auxiliary variable / column j sits: basic or not. */
bool lp_row_is_basic(const struct lp *lp, int i);
bool lp_col_is_basic(const struct lp *lp, int j);

/* Read-outs of the last basic solution (structural and row values). */
double lp_col_value(const struct lp *lp, int j);
double lp_row_value(const struct lp *lp, int i);
double lp_row_dual(const struct lp *lp, int i);
double lp_col_dual(const struct lp *lp, int j);	/* reduced cost */
double lp_obj_value(const struct lp *lp);

/*
 * Writes the problem to path in the given format.  Returns 0 or ERR_IO.
 * verbose routes GLPK's messages about it to the debug log.
 */
int lp_write(struct lp *lp, const char *path, enum lp_format fmt,
    bool verbose);

/*
 * Frees this thread's GLPK environment.  Threads that ran an LP call it
 * before they exit; a later lp_new() on the same thread starts a new one.
 */
void lp_thread_done(void);

#endif /* WEFT_ENGINE_LP_H */
