/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Renders forwarding tables (GET /v1/plan/forwarding) as JSON. */
#ifndef WEFT_API_CODEC_FWD_H
#define WEFT_API_CODEC_FWD_H

/*
 * DESIGN
 * The tables are computed on demand from the published plan (fwd_build)
 * and rendered here on the requesting HTTP thread; the shape is documented
 * in docs/api.md under "Forwarding tables".  Nodes, links and
 * destinations are named by their ids.  Doubles are printed with 17
 * significant digits.
 */

#include <stddef.h>
#include <stdint.h>

struct fwd;
struct model;

/*
 * Renders the tables f built from model m's plan (plan revision revision)
 * into a new NUL-terminated JSON text *textp of *lenp bytes (the caller
 * frees it).  node and dst are node indices of m that restrict the tables
 * to that node and that destination, or -1 for all; loops are restricted
 * by dst only.  Returns 0, or ERR_INTERNAL (an index out of range, or
 * jansson failed) with *textp NULL.  Any thread.
 */
int codec_fwd_render(const struct model *m, const struct fwd *f,
    int64_t revision, long node, long dst, char **textp, size_t *lenp);

#endif /* WEFT_API_CODEC_FWD_H */
