/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Where the map puts the nodes: their coordinates, or a drawn layout. */

/*
 * DESIGN
 * Nodes with coordinates are projected equirectangularly: x grows with
 * longitude times the cosine of the middle latitude (so shapes keep their
 * proportions near that latitude), y falls with latitude, and the bounding
 * box is fitted into the drawing with a margin, centred.  Nodes without
 * coordinates are placed by a force-directed layout (Fruchterman and
 * Reingold 1991: every pair repels with k^2/d, every link attracts with
 * d^2/k, each move capped by a temperature that falls linearly to zero)
 * run for a fixed number of rounds from a fixed start (a circle in node
 * order, nudged by a seeded generator), so the same network is always
 * drawn the same way.  Nodes with coordinates stay where the projection
 * put them and only pull the others.  Longitudes are taken as they are:
 * a network across the 180th meridian is drawn split (XXX).
 */

"use strict";

var weftLayout = (function () {
	var SEED = 20250601;

	/* A small seeded generator (xorshift32), values in [0, 1). */
	function rng(seed) {
		var s = seed >>> 0 || 1;
		return function () {
			s ^= s << 13;
			s >>>= 0;
			s ^= s >>> 17;
			s ^= s << 5;
			s >>>= 0;
			return s / 4294967296;
		};
	}

	function hasCoords(n) {
		return typeof n.lat === "number" && typeof n.lon === "number";
	}

	/*
	 * Places nodes (objects with id and optional lat, lon) in a w x h
	 * drawing; edges are [id, id] pairs.  Returns {id: {x, y}}.
	 */
	function place(nodes, edges, w, h, margin) {
		var pos = Object.create(null), fixed = Object.create(null),
		    geo = [], free = [], i;

		for (i = 0; i < nodes.length; i++)
			(hasCoords(nodes[i]) ? geo : free).push(nodes[i]);
		if (geo.length > 0)
			project(geo, w, h, margin, pos, fixed);
		if (free.length > 0)
			force(nodes, edges, w, h, margin, pos, fixed);
		return pos;
	}

	/*
	 * Height over width of the projected bounding box of the nodes with
	 * coordinates; null when fewer than two of them span an area.
	 */
	function aspect(nodes) {
		var geo = nodes.filter(hasCoords), b;
		if (geo.length < 2)
			return null;
		b = bounds(geo);
		return b.sx > 0 && b.sy > 0 ? b.sy / b.sx : null;
	}

	function bounds(geo) {
		var minLat = Infinity, maxLat = -Infinity, minLon = Infinity,
		    maxLon = -Infinity, i, n, k;

		for (i = 0; i < geo.length; i++) {
			n = geo[i];
			minLat = Math.min(minLat, n.lat);
			maxLat = Math.max(maxLat, n.lat);
			minLon = Math.min(minLon, n.lon);
			maxLon = Math.max(maxLon, n.lon);
		}
		k = Math.cos((minLat + maxLat) / 2 * Math.PI / 180);
		return { minLat: minLat, maxLat: maxLat, minLon: minLon, k: k,
		    sx: (maxLon - minLon) * k, sy: maxLat - minLat };
	}

	function project(geo, w, h, margin, pos, fixed) {
		var b = bounds(geo), minLat = b.minLat, maxLat = b.maxLat,
		    minLon = b.minLon, k = b.k, sx = b.sx, sy = b.sy, i, n, s, ox,
		    oy;

		s = Math.min(sx > 0 ? (w - 2 * margin) / sx : Infinity,
		    sy > 0 ? (h - 2 * margin) / sy : Infinity);
		if (!isFinite(s))
			s = 0;
		ox = (w - sx * s) / 2;
		oy = (h - sy * s) / 2;
		for (i = 0; i < geo.length; i++) {
			n = geo[i];
			pos[n.id] = { x: ox + (n.lon - minLon) * k * s,
			    y: oy + (maxLat - n.lat) * s };
			fixed[n.id] = true;
		}
	}

	function force(nodes, edges, w, h, margin, pos, fixed) {
		var n = nodes.length, idx = Object.create(null), x = [], y = [],
		    dx = [], dy = [], rand = rng(SEED), i, j, e, a, b, ddx, ddy, d,
		    f, t, t0, k,
		    rounds, r, nfree = 0, cx = w / 2, cy = h / 2, ang, len,
		    anyFixed = false, fx = [], freeIdx = [], fp, q;

		/* Every pair repels with k^2/d.  (Math.sqrt, not Math.hypot:
		   this runs for every pair in every round, and the distances
		   are far from overflow.) */
		function repel(i_, j_) {
			var ex = x[i_] - x[j_], ey = y[i_] - y[j_],
			    dd = Math.max(Math.sqrt(ex * ex + ey * ey), 0.01),
			    ff = k * k / dd;
			dx[i_] += ex / dd * ff;
			dy[i_] += ey / dd * ff;
			dx[j_] -= ex / dd * ff;
			dy[j_] -= ey / dd * ff;
		}

		for (i = 0; i < n; i++) {
			idx[nodes[i].id] = i;
			fx.push(!!fixed[nodes[i].id]);
			if (!fx[i])
				freeIdx.push(i);
			if (fixed[nodes[i].id]) {
				x.push(pos[nodes[i].id].x);
				y.push(pos[nodes[i].id].y);
				anyFixed = true;
			} else {
				x.push(0);
				y.push(0);
				nfree++;
			}
		}
		/* Start: free nodes on a circle, in node order, nudged. */
		r = Math.min(w, h) / 2 - margin;
		for (i = 0, j = 0; i < n; i++) {
			if (fixed[nodes[i].id])
				continue;
			ang = 2 * Math.PI * j / nfree;
			x[i] = cx + r * Math.cos(ang) + (rand() - 0.5) * r * 0.1;
			y[i] = cy + r * Math.sin(ang) + (rand() - 0.5) * r * 0.1;
			j++;
		}
		k = 0.9 * Math.sqrt((w - 2 * margin) * (h - 2 * margin) / n);
		rounds = n <= 200 ? 400 : Math.max(60, Math.floor(80000 / n));
		t0 = Math.min(w, h) / 8;
		for (t = 0; t < rounds; t++) {
			for (i = 0; i < n; i++) {
				dx[i] = 0;
				dy[i] = 0;
			}
			/* Nodes with coordinates never move, so the force
			   between two of them is not computed; a free node
			   meets the others in the same order either way. */
			for (i = 0, fp = 0; i < n; i++) {
				if (!fx[i]) {
					for (j = i + 1; j < n; j++)
						repel(i, j);
					continue;
				}
				while (fp < freeIdx.length && freeIdx[fp] <= i)
					fp++;
				for (q = fp; q < freeIdx.length; q++)
					repel(i, freeIdx[q]);
			}
			for (e = 0; e < edges.length; e++) {
				a = idx[edges[e][0]];
				b = idx[edges[e][1]];
				if (a === undefined || b === undefined || a === b)
					continue;
				ddx = x[a] - x[b];
				ddy = y[a] - y[b];
				d = Math.max(Math.hypot(ddx, ddy), 0.01);
				f = d * d / k;
				dx[a] -= ddx / d * f;
				dy[a] -= ddy / d * f;
				dx[b] += ddx / d * f;
				dy[b] += ddy / d * f;
			}
			/* A weak pull to the centre keeps islands in view. */
			for (i = 0; i < n; i++) {
				dx[i] -= (x[i] - cx) * 0.01 * k / r;
				dy[i] -= (y[i] - cy) * 0.01 * k / r;
			}
			f = t0 * (1 - t / rounds);
			for (i = 0; i < n; i++) {
				if (fixed[nodes[i].id])
					continue;
				len = Math.hypot(dx[i], dy[i]);
				if (len > 0) {
					x[i] += dx[i] / len * Math.min(len, f);
					y[i] += dy[i] / len * Math.min(len, f);
				}
				x[i] = Math.min(w - margin, Math.max(margin, x[i]));
				y[i] = Math.min(h - margin, Math.max(margin, y[i]));
			}
		}
		if (!anyFixed)
			fit(x, y, w, h, margin);
		for (i = 0; i < n; i++)
			if (!fixed[nodes[i].id])
				pos[nodes[i].id] = { x: x[i], y: y[i] };
	}

	/* Stretches a free layout to fill the drawing, keeping its shape. */
	function fit(x, y, w, h, margin) {
		var minX = Infinity, maxX = -Infinity, minY = Infinity,
		    maxY = -Infinity, sx, sy, s, i;

		for (i = 0; i < x.length; i++) {
			minX = Math.min(minX, x[i]);
			maxX = Math.max(maxX, x[i]);
			minY = Math.min(minY, y[i]);
			maxY = Math.max(maxY, y[i]);
		}
		sx = maxX - minX;
		sy = maxY - minY;
		s = Math.min(sx > 0 ? (w - 2 * margin) / sx : Infinity,
		    sy > 0 ? (h - 2 * margin) / sy : Infinity);
		if (!isFinite(s))
			return;
		for (i = 0; i < x.length; i++) {
			x[i] = (w - sx * s) / 2 + (x[i] - minX) * s;
			y[i] = (h - sy * s) / 2 + (y[i] - minY) * s;
		}
	}

	return { place: place, aspect: aspect, hasCoords: hasCoords };
})();
