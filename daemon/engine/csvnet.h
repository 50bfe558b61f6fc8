/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Reads and writes a network as one CSV text that a spreadsheet can hold. */
#ifndef WEFT_ENGINE_CSVNET_H
#define WEFT_ENGINE_CSVNET_H

/*
 * The format (docs/csv-format.md has the full description and an example):
 * RFC 4180 fields and quoting, one record per row, the first field naming
 * the kind of record:
 *
 *   node,<id>,<name>,<lat>,<lon>
 *   link,<id>,<a>,<b>,<capacity>,<te_metric>,<state>
 *   demand,<src>,<dst>,<rate>,<priority>
 *
 * Capacities and rates are bit/s with an optional SI suffix (k, M, G, T:
 * "10G" is 1e10).  name, lat/lon (both or neither), te_metric (default 1),
 * state ("up" or "down", default up) and priority (default 0) may be empty
 * or left out.  Rows come in any order.  Lines starting with '#' are
 * comments, blank rows (also ",,,,") are skipped, trailing empty fields are
 * ignored, unquoted fields are trimmed, CRLF or LF ends a row, and a UTF-8
 * byte order mark at the start is skipped.  Ids and names are UTF-8, and
 * ids hold no '/' (as the API's ids, see model_text_problem()).
 *
 * Any thread may call these functions; they share no state.
 */

#include <stddef.h>
#include <stdio.h>

struct err;
struct model;

#define CSVNET_NAME_MAX		256	/* longest node name, bytes */

/*
 * Parses text[0 .. len-1] (need not be NUL-terminated; nothing past len is
 * read) into a new model: the nodes, the links and the demands in the
 * order they appear, each demand kept separately.  Returns 0 and the model
 * in *mp, which the caller frees with model_free(); or ERR_INVALID with
 * *mp NULL and the first problem in e, where "line N" is the line on which
 * the offending row starts.  A text without any node row is refused, so
 * that an empty body cannot pass for an empty network.  Node rows are read
 * before link rows and link rows before demand rows, so an error in a node
 * row is reported before one in an earlier link row.  Memory use is linear
 * in len; the caller bounds len.
 */
int csvnet_parse(const char *text, size_t len, struct model **mp,
    struct err *e);

/*
 * Writes m to f in the format above, with '#' header lines, nodes first,
 * then links, then the demands.  Numbers are written in their shortest
 * form that reads back to the same double, rates with an SI suffix where
 * that is exact, so csvnet_parse() of the output gives an equal model.
 * Returns 0, or ERR_IO if writing to f failed.
 */
int csvnet_write(const struct model *m, FILE *f);

#endif /* WEFT_ENGINE_CSVNET_H */
