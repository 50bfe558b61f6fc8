/* SPDX-License-Identifier: GPL-3.0-or-later */
/* The utilisation colour scale of the network map, and its legend. */

/*
 * DESIGN
 * A sequential ramp of six stops defined here, from dark blue through a
 * neutral grey to light yellow, for utilisation 0 to 1 (load / capacity):
 *
 *	utilisation	colour		CIELAB L*
 *	0.0		#00256e		18
 *	0.2		#004992		31
 *	0.4		#4d729e		47
 *	0.6		#9a9895		63
 *	0.8		#e0c079		79
 *	1.0		#fff175		94
 *
 * Between two stops each sRGB channel is interpolated linearly and rounded
 * to the nearest integer, halves up: c = floor(c0 + (c1 - c0) * f + 0.5)
 * with f = (u - u0) / (u1 - u0).  Below 0 the first stop is used, above 1
 * the last.  Why it suits deuteranopia and protanopia: lightness rises
 * steadily with utilisation, so the order reads from lightness alone, and
 * the hue moves only along the blue-yellow axis, which people without
 * working L or M cones still see; the ramp has no red-green contrast to
 * lose.  Simulating both deficiencies (Viénot, Brettel and Mollon 1999)
 * keeps L* rising, 17 to 94, and every stop distinct.  docs/api.md and
 * tests/browser/map_test.py carry the same stops; the test computes the
 * expected colours on its own.
 */

"use strict";

var weftScale = (function () {
	var STOPS = [
		[0.0, "#00256e"],
		[0.2, "#004992"],
		[0.4, "#4d729e"],
		[0.6, "#9a9895"],
		[0.8, "#e0c079"],
		[1.0, "#fff175"],
	];
	var DOWN = "#8c8c8c";		/* a failed link direction */
	var NODATA = "#d0d0d0";		/* no utilisation known */

	function hex(s) {
		return [parseInt(s.slice(1, 3), 16), parseInt(s.slice(3, 5), 16),
		    parseInt(s.slice(5, 7), 16)];
	}

	/* The colour of utilisation u as [r, g, b], 0..255. */
	function rgb(u) {
		var i, u0, u1, c0, c1, f, out = [];

		if (u <= STOPS[0][0])
			return hex(STOPS[0][1]);
		if (u >= STOPS[STOPS.length - 1][0])
			return hex(STOPS[STOPS.length - 1][1]);
		for (i = 0; i + 2 < STOPS.length && u > STOPS[i + 1][0]; i++)
			;
		u0 = STOPS[i][0];
		u1 = STOPS[i + 1][0];
		c0 = hex(STOPS[i][1]);
		c1 = hex(STOPS[i + 1][1]);
		f = (u - u0) / (u1 - u0);
		for (var k = 0; k < 3; k++)
			out.push(Math.floor(c0[k] + (c1[k] - c0[k]) * f + 0.5));
		return out;
	}

	/* The CSS colour of utilisation u; NODATA when u is not a number. */
	function css(u) {
		if (typeof u !== "number" || !isFinite(u))
			return NODATA;
		var c = rgb(u);
		return "rgb(" + c[0] + ", " + c[1] + ", " + c[2] + ")";
	}

	/* Black or white, whichever reads better on the colour of u. */
	function ink(u) {
		return typeof u === "number" && u >= 0.5 ? "#111111" : "#ffffff";
	}

	return { STOPS: STOPS, DOWN: DOWN, NODATA: NODATA, rgb: rgb, css: css,
	    ink: ink };
})();
