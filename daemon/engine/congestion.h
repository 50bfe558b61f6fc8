/* SPDX-License-Identifier: GPL-3.0-or-later */
/* The congestion cost of a link: convex, piecewise linear in its load. */
#ifndef WEFT_ENGINE_CONGESTION_H
#define WEFT_ENGINE_CONGESTION_H

/*
 * DESIGN
 * The congestion objective minimises sum over arcs of Phi(load, capacity),
 * the link cost of Fortz and Thorup ("Internet traffic engineering by
 * optimizing OSPF weights", Proc. IEEE INFOCOM 2000).  Phi(0) = 0 and its
 * slope grows with the utilisation load / capacity:
 *
 *   utilisation   [0, 1/3)  [1/3, 2/3)  [2/3, 9/10)  [9/10, 1)  [1, 11/10)  >= 11/10
 *   slope            1          3           10          70         500       5000
 *
 * Phi is in the unit of the load (bit/s here).  Being convex, it is the
 * largest of its pieces' lines, Phi(l) = max_i (slope_i l - b_i c), which is
 * how an LP states it (congestion.c derives b_i).  The table is data, read
 * by any thread.
 */

#define CONGESTION_PIECES	6

struct congestion_piece {
	double util_from;	/* utilisation where the piece begins */
	double slope;		/* dPhi / dload on the piece */
	double intercept;	/* b: on the piece, Phi = slope x load - b x
				   capacity */
};

/* The pieces, by increasing utilisation; util_from of the first is 0. */
extern const struct congestion_piece congestion_pieces[CONGESTION_PIECES];

/*
 * Returns Phi(load, cap), in the unit of load, by integrating the slopes
 * from 0 to load (not from the intercepts, so the two forms check each
 * other).  cap > 0; a load at or below 0 costs 0.  Any thread.
 */
double congestion_phi(double load, double cap);

#endif /* WEFT_ENGINE_CONGESTION_H */
