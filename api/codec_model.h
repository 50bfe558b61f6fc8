/* SPDX-License-Identifier: GPL-3.0-or-later */
/* JSON <-> topology, traffic matrix, policy, link patch; strictly checked. */
#ifndef WEFT_API_CODEC_MODEL_H
#define WEFT_API_CODEC_MODEL_H

/*
 * DESIGN
 * Decoders take the raw request body (not NUL-terminated, any bytes),
 * check its nesting depth before handing it to jansson, parse it, walk the
 * tree into engine structs and drop the tree.  They reject rather than
 * repair: a member of the wrong type, an unknown member, a missing
 * required member, a number that is not finite or out of range, a
 * duplicate id, a link to an unknown node, a self-loop, an over-long id.
 * The first problem found is reported through e with where set to a JSON
 * path ("links[2].capacity_bps") or, for text that is not JSON, to
 * "line:col".  Nothing is returned on failure.  Encoders return new
 * NUL-terminated compact JSON texts the caller frees.  Any thread may call
 * these functions.
 */

#include <stdbool.h>
#include <stddef.h>
#include <stdint.h>

struct db_name;
struct err;
struct link_patch;
struct matrix;
struct model;
struct policy;

#define CODEC_DEPTH_MAX		16	/* deepest nesting of [ and { */
#define CODEC_NODES_MAX		100000	/* nodes in one topology */
#define CODEC_LINKS_MAX		400000	/* links in one topology */
#define CODEC_DEMANDS_MAX	2000000	/* demands in one matrix */
#define CODEC_TEXT_MAX		256	/* node display name, bytes */
#define CODEC_MATRIX_NAME_MAX	64	/* matrix name, bytes */

/*
 * Checks that name is a matrix name: 1..CODEC_MATRIX_NAME_MAX characters
 * of [A-Za-z0-9._-].
 */
bool codec_matrix_name_ok(const char *name);

/*
 * Decodes {"nodes":[...],"links":[...]} into a new model with no demands
 * and the default policy.  A link's optional "srlgs" is an array of at
 * most MODEL_SRLG_MAX distinct integers 0..4294967295 (ERR_INVALID at
 * "links[i].srlgs" or "links[i].srlgs[k]" otherwise).  Returns 0 and *mp (the caller's), ERR_INVALID
 * (400) or ERR_TOOBIG (an array over its CODEC_*_MAX) with detail in e.
 */
int codec_topology_decode(const char *text, size_t len, struct model **mp,
    struct err *e);

/*
 * Decodes {"demands":[...]} into a new matrix named name (copied, may be
 * NULL).  Node ids are checked for form, not against a topology.
 */
int codec_matrix_decode(const char *text, size_t len, const char *name,
    struct matrix **mxp, struct err *e);

/*
 * Decodes {"objective","headroom","matrix","balance_tolerance"} into *p,
 * which must be empty (policy_clear()ed or fresh); on success p->matrix
 * is owned by p.  On failure *p holds nothing to free.
 */
int codec_policy_decode(const char *text, size_t len, struct policy *p,
    struct err *e);

/*
 * Decodes {"state","capacity_bps","te_metric","srlgs"} (at least one) into
 * *lp; "srlgs" as in a topology's links.
 */
int codec_link_patch_decode(const char *text, size_t len,
    struct link_patch *lp, struct err *e);

/*
 * Encoders: each returns a new text of *lenp bytes plus a NUL, or NULL
 * only if jansson fails (out of memory).
 */
/* {"nodes":[...],"links":[...]}, the shape codec_topology_decode reads. */
char *codec_topology_encode(const struct model *m, size_t *lenp);
/* {"name":..,"demands":[...]}. */
char *codec_matrix_encode(const struct matrix *mx, size_t *lenp);
/* {"matrices":[{"name","demands","total_bps"}]}. */
char *codec_matrices_encode(const struct db_name *names, size_t n,
    size_t *lenp);
/* {"objective","headroom","matrix","balance_tolerance"}. */
char *codec_policy_encode(const struct policy *p, size_t *lenp);
/*
 * One link of m: {"id","a","b","capacity_bps","te_metric","state",
 * "srlgs"}; "srlgs" always, ascending ([] when none).
 */
char *codec_link_encode(const struct model *m, size_t i, size_t *lenp);

#endif /* WEFT_API_CODEC_MODEL_H */
