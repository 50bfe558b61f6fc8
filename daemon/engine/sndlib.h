/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Reads an SNDlib native network file into a weft model. */
#ifndef WEFT_ENGINE_SNDLIB_H
#define WEFT_ENGINE_SNDLIB_H

/*
 * SNDlib (Orlowski et al., Networks 55(3), 2010) publishes network design
 * instances in a plain "native" text format: sections META, NODES, LINKS,
 * DEMANDS and ADMISSIBLE_PATHS, each "NAME (" ... ")".  weft reads them so
 * that research instances can be planned and compared.  How the file maps
 * onto the model:
 *
 *   NODES   "id ( x y )": a node; SNDlib's (x y) is (longitude latitude).
 *           Coordinates outside [-180, 180] x [-90, 90] are a planar
 *           drawing (atlanta, zib54, ta2) and leave has_coords false.
 *   LINKS   "id ( a b ) precap precost rcost setup ( {mcap mcost}* )": one
 *           full-duplex link, up, with capacity precap in each direction
 *           if precap > 0, else the first module's capacity mcap; a link
 *           with neither is rejected, since a weft link needs a positive
 *           capacity.  TE metric: rcost if > 0, else 1.  Costs are checked
 *           and otherwise ignored.
 *   DEMANDS "id ( s t ) unit value hops": a demand s -> t of rate value,
 *           priority 0.  The routing unit and the hop limit (a number or
 *           UNLIMITED) are checked and ignored: weft routes continuous flow
 *           and has no hop limits.
 *   ADMISSIBLE_PATHS: checked for balanced parentheses and skipped; weft
 *           chooses its own paths.
 *   META    "key = value" lines; only "unit" is used: BITSPERSEC,
 *           KBITPERSEC, MBITPERSEC or GBITPERSEC, Mbit/s when absent.
 *           Capacities and rates are converted to bit/s.
 *
 * Sections come in the order above (META first), each at most once;
 * NODES, LINKS and DEMANDS are required.  Lines whose first non-blank
 * character is '#' are comments; a first line starting with '?' is the
 * format banner.  Everything else is an error, reported with where set to
 * "line N" (1-based).  Ids of each kind (node, link, demand) are unique,
 * at most MODEL_ID_MAX bytes, UTF-8 and without '/' (as the API's ids, see
 * model_text_problem()); numbers are finite decimals without sign
 * (coordinates may be negative).
 *
 * The input need not be NUL-terminated and may contain anything: the
 * parser reads only text[0 .. len-1].  Memory use is linear in len; the
 * caller bounds len (the API's body limit).  Any thread may call these
 * functions; they share no state.
 */

#include <stddef.h>

struct err;
struct model;

/* What a parse found besides the model, for reporting to the user. */
struct sndlib_info {
	char unit[16];		/* unit named in META, "" if none */
	double unit_bps;	/* bit/s per unit of the file's numbers */
	size_t n_hop_limited;	/* demands whose hop limit was ignored */
	size_t n_path_lines;	/* lines of ADMISSIBLE_PATHS skipped */
	size_t n_planar;	/* nodes whose coordinates were not lat/lon */
};

/*
 * Parses text[0 .. len-1] as an SNDlib native network.  On success returns
 * 0 and a new model in *mp (the caller frees it with model_free); info, if
 * not NULL, is filled in.  On failure returns ERR_INVALID with *mp NULL and
 * the first problem in e ("line N").
 */
int sndlib_parse_info(const char *text, size_t len, struct model **mp,
    struct sndlib_info *info, struct err *e);

/* As sndlib_parse_info() without the info. */
int sndlib_parse(const char *text, size_t len, struct model **mp,
    struct err *e);

#endif /* WEFT_ENGINE_SNDLIB_H */
