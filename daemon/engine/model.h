/* SPDX-License-Identifier: GPL-3.0-or-later */
/* The network model the engine plans over: nodes, links, demands, policy. */
#ifndef WEFT_ENGINE_MODEL_H
#define WEFT_ENGINE_MODEL_H

/*
 * DESIGN
 * A struct model is plain data, built by the importers, by the API codecs
 * and by storage (the snapshot the solver thread takes), then read by the
 * solver.  Nodes are referred to by index into nodes[]; ids are the
 * operator's names, unique within their kind.  A link {a, b} is full duplex:
 * arc 2*i runs a->b and arc 2*i+1 runs b->a, each with capacity_bps.  A link
 * whose state is down has no capacity.  Rates are bit/s (double), TE metrics
 * dimensionless and positive, priorities 0 (most important) .. MODEL_PRIO_MAX.
 * demands[] holds only demands whose ends are nodes of the model; a stored
 * matrix may name nodes a later topology dropped, and storage counts those
 * demands in n_unplaced and unplaced_bps instead, so a plan can say what it
 * left out.
 * A model is not shared between threads while being built; once handed to
 * the solver it is read-only.
 */

#include <stdbool.h>
#include <stddef.h>
#include <stdint.h>

struct err;

#define MODEL_ID_MAX		128	/* longest node or link id, bytes */
#define MODEL_PRIO_MAX		7	/* priorities run 0..7 */
#define MODEL_RATE_MAX		1e15	/* largest accepted rate, bit/s (1 Pbit/s) */
#define MODEL_METRIC_MAX	1e9	/* largest accepted TE metric */
#define MODEL_SRLG_MAX		64	/* SRLGs per link */

struct node {
	char *id;		/* owned, unique, 1..MODEL_ID_MAX bytes */
	char *name;		/* owned, free text, may be NULL */
	double lat, lon;	/* degrees, valid when has_coords */
	bool has_coords;
};

struct link {
	char *id;		/* owned, unique */
	size_t a, b;		/* node indices, a != b */
	double capacity_bps;	/* per direction, > 0 */
	double te_metric;	/* > 0 */
	bool up;		/* false: administratively or failed down */
	uint32_t *srlgs;	/* owned: shared-risk link groups, ascending,
				   distinct; NULL when none */
	size_t n_srlgs;		/* at most MODEL_SRLG_MAX */
};

struct demand {
	size_t src, dst;	/* node indices, src != dst */
	double rate_bps;	/* >= 0 */
	int priority;		/* 0 (most important) .. MODEL_PRIO_MAX */
};

enum objective {
	OBJ_COST = 0,		/* min sum TE metric x flow */
	OBJ_BALANCE = 1,	/* min max utilisation, then min cost */
	OBJ_CONGESTION = 2,	/* min sum of the Fortz-Thorup link cost */
};

enum formulation {
	FORM_ARC = 0,		/* node-arc, commodities per source: exact */
	FORM_PATH = 1,		/* paths by column generation */
	FORM_POT = 2,		/* balance by the exponential potential
				   method, certified gap (form_pot.c); very
				   large matrices */
};

struct policy {
	enum objective objective;
	double headroom;	/* usable fraction of capacity, (0, 1] */
	char *matrix;		/* owned, name of the matrix planned; NULL: none */
	double balance_tol;	/* relative slack on max utilisation when the
				   balance objective then minimises cost */
	enum formulation formulation;
	double gap_target;	/* column generation stops once the certified
				   relative gap is at or below it, [0, 0.5] */
	bool keep_paths;	/* prefer the paths in use when within
				   keep_paths_tol of optimal */
	double keep_paths_tol;	/* relative, [0, 0.5] */
};

struct model {
	struct node *nodes;	/* owned array */
	size_t n_nodes;
	struct link *links;	/* owned array */
	size_t n_links;
	struct demand *demands;	/* owned array: the policy's matrix */
	size_t n_demands;
	size_t n_unplaced;	/* demands of the matrix naming nodes not in
				   the topology (not in demands[]) */
	double unplaced_bps;	/* their total rate, bit/s */
	struct policy policy;	/* owned strings */
	int64_t revision;	/* model revision this snapshot reflects */
	size_t cap_nodes, cap_links, cap_demands;	/* private: array sizes */
	struct model_index *index;	/* private: id lookup, built lazily */
};

/*
 * A demand as it travels outside the engine (API, storage): node ids, not
 * indices, so a matrix can be stored and checked against any topology.
 */
struct matrix_entry {
	char *src, *dst;	/* owned node ids */
	double rate_bps;
	int priority;
};

struct matrix {
	char *name;			/* owned, may be NULL */
	struct matrix_entry *entries;	/* owned array */
	size_t n;
	size_t cap;			/* private */
};

/* Returns a new empty model with the default policy (cost, headroom 1). */
struct model *model_new(void);

/* Frees m and everything it owns; m may be NULL. */
void model_free(struct model *m);

/* Returns a deep copy of m. */
struct model *model_copy(const struct model *m);

/*
 * Sets p to the default policy: cost, headroom 1, no matrix, balance tol
 * 1e-7, path formulation (column generation), gap target 1e-7, keep_paths
 * off (tol 1e-3).
 */
void policy_default(struct policy *p);

/* Frees the strings p owns; p itself is not freed. */
void policy_clear(struct policy *p);

/*
 * The words for objectives ("cost", "balance", "congestion") and
 * formulations ("arc", "path"), as the API and the database spell them.
 * The _word functions return NULL for a value outside the enum; the
 * _parse functions return 0 or ERR_INVALID.
 */
const char *objective_word(enum objective o);
int objective_parse(const char *word, enum objective *op);
const char *formulation_word(enum formulation f);
int formulation_parse(const char *word, enum formulation *fp);

/*
 * Appends a node; id and name are copied.  Returns 0 and its index in
 * *idxp (idxp may be NULL), or ERR_INVALID (empty or over-long id, a
 * control character in it, or a duplicate id), with detail in e under
 * "<where>.id".
 */
int model_add_node(struct model *m, const char *id, const char *name,
    size_t *idxp, const char *where, struct err *e);

/*
 * Appends a link between node ids a and b; id is copied.  Checks the id,
 * that a and b exist and differ, capacity and metric are finite and in
 * range.  Returns 0 or ERR_INVALID (also for a duplicate id) with detail
 * in e under "<where>.<field>".
 */
int model_add_link(struct model *m, const char *id, const char *a,
    const char *b, double capacity_bps, double te_metric, bool up,
    const char *where, struct err *e);

/*
 * Appends a demand between node ids; checks ends exist and differ, rate
 * finite in [0, MODEL_RATE_MAX], priority in range.  Demands with the same
 * ends and priority are kept separate.  Returns 0 or ERR_INVALID.
 */
int model_add_demand(struct model *m, const char *src, const char *dst,
    double rate_bps, int priority, const char *where, struct err *e);

/*
 * Sets link i's SRLGs to a sorted, de-duplicated copy of the n numbers in
 * s.  Returns 0 or ERR_INVALID (more than MODEL_SRLG_MAX) with detail
 * under "<where>.srlgs".
 */
int model_set_link_srlgs(struct model *m, size_t i, const uint32_t *s,
    size_t n, const char *where, struct err *e);

/* Whether link l is in SRLG g. */
bool link_in_srlg(const struct link *l, uint32_t g);

/*
 * Checks text s[0 .. n-1] from an importer against what the API carries:
 * valid UTF-8 (RFC 3629, as JSON needs: no overlong forms, no surrogates,
 * nothing past U+10FFFF) and, for an id (is_id), no '/', which a path
 * segment such as /v1/links/{id} cannot hold.  Returns NULL when s is
 * fine, else a constant phrase saying what is wrong ("is not valid
 * UTF-8").
 */
const char *model_text_problem(const char *s, size_t n, bool is_id);

/* Looks up a node or link id: returns its index or -1. */
long model_find_node(const struct model *m, const char *id);
long model_find_link(const struct model *m, const char *id);

/* Removes all demands and the unplaced count (topology and policy stay). */
void model_clear_demands(struct model *m);

/* Matrices: new, free (NULL ok), append a copy of an entry. */
struct matrix *matrix_new(const char *name);
void matrix_free(struct matrix *mx);
void matrix_add(struct matrix *mx, const char *src, const char *dst,
    double rate_bps, int priority);

/*
 * Checks each entry's fields without a topology: ids non-empty and within
 * MODEL_ID_MAX, src != dst, rate finite in range, priority in range.
 * Returns 0 or ERR_INVALID with where "demands[i].field".
 */
int matrix_check(const struct matrix *mx, struct err *e);

/*
 * Replaces m's demands with mx resolved against m's nodes and sets the
 * unplaced count to zero.  Returns 0 or ERR_INVALID naming the first
 * unknown node ("demands[i].src").  On error m's demands are left empty.
 */
int model_set_matrix(struct model *m, const struct matrix *mx, struct err *e);

/* Returns a new matrix holding m's demands by node id. */
struct matrix *model_get_matrix(const struct model *m, const char *name);

#endif /* WEFT_ENGINE_MODEL_H */
