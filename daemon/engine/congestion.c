/* SPDX-License-Identifier: GPL-3.0-or-later */
/* The congestion cost of a link: its pieces and its value. */

/*
 * DESIGN
 * The breakpoints and slopes are those of Fortz and Thorup (INFOCOM 2000),
 * section II.  XXX They are recalled from memory: the paper's text could
 * not be read from here (the searchable sources held only summaries of it,
 * which agree that the cost is convex, piecewise linear and ends with
 * slope 5000).  Check them against the paper before relying on them.
 *
 * The intercepts make Phi continuous.  Write u_i for util_from of piece i
 * and s_i for its slope.  Piece 1 passes through the origin, so b_1 = 0.
 * At the breakpoint l = u_i c pieces i-1 and i meet:
 *
 *   s_{i-1} u_i c - b_{i-1} c = s_i u_i c - b_i c
 *   =>  b_i = b_{i-1} + (s_i - s_{i-1}) u_i
 *
 *   b_2 = 0      + (3 - 1)      x 1/3   = 2/3
 *   b_3 = 2/3    + (10 - 3)     x 2/3   = 16/3
 *   b_4 = 16/3   + (70 - 10)    x 9/10  = 16/3 + 54     = 178/3
 *   b_5 = 178/3  + (500 - 70)   x 1     = 178/3 + 430   = 1468/3
 *   b_6 = 1468/3 + (5000 - 500) x 11/10 = 1468/3 + 4950 = 16318/3
 *
 * Check: Phi(c) = 70 c - 178/3 c = 32/3 c, and integrating the slopes,
 * 1/3 + 3 x 1/3 + 10 x 7/30 + 70 x 1/10 = 1/3 + 1 + 7/3 + 7 = 32/3.
 */

#include <assert.h>

#include "congestion.h"

const struct congestion_piece congestion_pieces[CONGESTION_PIECES] = {
	{ .util_from = 0.0, .slope = 1, .intercept = 0.0 },
	{ .util_from = 1.0 / 3, .slope = 3, .intercept = 2.0 / 3 },
	{ .util_from = 2.0 / 3, .slope = 10, .intercept = 16.0 / 3 },
	{ .util_from = 9.0 / 10, .slope = 70, .intercept = 178.0 / 3 },
	{ .util_from = 1.0, .slope = 500, .intercept = 1468.0 / 3 },
	{ .util_from = 11.0 / 10, .slope = 5000, .intercept = 16318.0 / 3 },
};

double
congestion_phi(double load, double cap)
{
	double phi = 0, lo, hi;
	int i;

	assert(cap > 0);
	if (!(load > 0))
		return 0;
	for (i = 0; i < CONGESTION_PIECES; i++) {
		lo = congestion_pieces[i].util_from * cap;
		if (load <= lo)
			break;
		hi = i + 1 < CONGESTION_PIECES ?
		    congestion_pieces[i + 1].util_from * cap : load;
		phi += congestion_pieces[i].slope *
		    ((load < hi ? load : hi) - lo);
	}
	return phi;
}
