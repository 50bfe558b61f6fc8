/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Reading a stored survivability report back, for the report chart. */
#ifndef WEFT_API_CODEC_REPORT_H
#define WEFT_API_CODEC_REPORT_H

/*
 * The report is the JSON text codec_sweep_report() wrote when the sweep
 * ended (docs/api.md, Sweeps); this reads the parts the chart draws.  Any
 * thread may call these functions.
 */

#include <stddef.h>

struct err;

/* One link direction of the report's links[]. */
struct report_dir {
	char *link;		/* owned: the link id */
	char *from, *to;	/* owned: node ids, the direction */
	double capacity_bps;	/* per direction; NaN when absent */
	double worst_load_bps;	/* NaN when absent */
	double worst_util;	/* worst_utilization, a fraction; NaN when
				   absent */
	long worst_index;	/* the scenario causing it; -1 when absent */
};

struct report {
	double headroom;	/* the policy's usable fraction; NaN when
				   absent */
	double worst_max_util;	/* worst_max_utilization.value; NaN: none */
	long worst_max_index;	/* its scenario; -1: none */
	size_t n_unserved;	/* scenarios that leave traffic unserved */
	struct report_dir *dirs;	/* owned array of n_dirs, in the
					   report's order */
	size_t n_dirs;
};

/*
 * Reads report text (NUL-terminated).  Returns 0 and a new report in *rp
 * (codec_report_free() it), or ERR_INTERNAL with detail in e when the
 * text is not a report (it is our own stored text, so that is our bug).
 */
int codec_report_decode(const char *text, struct report **rp, struct err *e);

/* Frees r (NULL ok). */
void codec_report_free(struct report *r);

#endif /* WEFT_API_CODEC_REPORT_H */
