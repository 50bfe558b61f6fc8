/* SPDX-License-Identifier: GPL-3.0-or-later */
/* The map's drawing on one canvas: batched strokes, frames, hit-testing. */

/*
 * DESIGN
 * A continental network (the Kdl topology: 754 nodes, 899 links) drawn as
 * one SVG element per mark is some twenty thousand elements, and every pan
 * rebuilt them all: hundreds of milliseconds a frame.  Here the map is one
 * <canvas>; the page hands over the layout (node positions, computed once
 * per topology) and the rows (one per link, both directions, from the
 * plan), and a frame is drawn from those two arrays alone.  Marks of one
 * kind and colour go into one path and one stroke() or fill() call: all
 * casings, then the direction strokes grouped by their exact colour, the
 * arrows by their ink, crosses, badges, the selected link on top, nodes,
 * labels.  Marks wholly outside the view are skipped; a label is skipped
 * where it would overlap one already drawn (a grid of occupied cells),
 * and only nodes are labelled that a zoom leaves room for.
 *
 * Coordinates: layout units are those of the drawing (W wide, H high,
 * weftLayout's), the view maps them to screen units by p * k + (x, y)
 * like the former SVG's viewBox; widths and offsets are in screen units,
 * so strokes keep their width under zoom.  The canvas's backing store has
 * the element's CSS size times devicePixelRatio, and one transform maps
 * screen units onto it.
 *
 * Frames: invalidate() asks for one requestAnimationFrame; any number of
 * calls before it runs give one frame, so a burst of pointer moves costs
 * one drawing per displayed frame.  Recolouring (setRows) and panning
 * (setView) change no layout.  During a drag a frame only moves a copy of
 * the last whole frame (blit); a whole frame follows when the drag ends
 * or rests.  Hit-testing uses the geometry of the last whole frame, kept
 * in a typed array: the nearest link axis within HIT_R screen units of
 * the pointer, an arithmetic scan of the links, never the DOM.  For
 * tests, drawn() reports what the last whole frame drew.  Everything
 * runs on the page's main thread.
 */

"use strict";

var weftCanvas = (function () {
	var DIR_W = 4;			/* a direction's stroke width */
	var DIR_OFF = 2.6;		/* its offset from the link's axis */
	var PAIR_GAP = 13;		/* between parallel links of one pair */
	var CASING_W = 2 * DIR_OFF + DIR_W + 2;
	var HIT_R = 8;			/* hit distance from a link's axis */
	var NODE_R = 4.5;
	var LABEL_PX = 11;
	var CELL = 8;			/* label-overlap grid cell */
	var SETTLE_MS = 150;		/* a drag's pause before a whole frame */
	var C = {
		casing: "#3a3a36", casingDown: "#c4c2ba", casingSel: "#000000",
		halo: "#ffffff", cross: "#1d1d1b", badge: "#111111",
		badgeRim: "#ffffff", node: "#ffffff", nodeRim: "#1d1d1b",
		label: "#1d1d1b", labelHalo: "#eeece4", muted: "#5d5d57",
	};

	function create(canvas, opts) {
		/* willReadFrequently keeps the bitmap in main memory: in
		   headless Chromium without a GPU a frame's drawing calls
		   then took a third of the time, and the tests read its
		   pixels. */
		var ctx = canvas.getContext("2d", { alpha: false,
		    willReadFrequently: true }),
		    M = {
			W: 1000, H: 640, view: { k: 1, x: 0, y: 0 },
			nodes: [], pos: null, rows: [], selected: null,
			bg: "#eeece4", queued: false, frames: 0, frameMs: 0,
			fullMs: 0, snap: null, snapView: null, fast: false,
			settle: 0,
			last: null, widths: Object.create(null), font: "",
			empty: "", onframe: opts && opts.onframe,
		    };

		/* ---- sizes ---- */

		function size() {
			var r = canvas.getBoundingClientRect(),
			    dpr = window.devicePixelRatio || 1,
			    w = Math.max(1, Math.round(r.width * dpr)),
			    h = Math.max(1, Math.round(r.width * M.H / M.W * dpr));
			if (canvas.width !== w || canvas.height !== h) {
				canvas.width = w;
				canvas.height = h;
			}
			return w / M.W;
		}

		/* ---- geometry of one frame ---- */

		/* Screen position of node id. */
		function at(id) {
			var p = M.pos && M.pos[id] || { x: M.W / 2, y: M.H / 2 };
			return [p.x * M.view.k + M.view.x, p.y * M.view.k + M.view.y];
		}

		/*
		 * The axis of every link on the screen, moved sideways for
		 * parallel links: g[4i..4i+3] = x1, y1, x2, y2.
		 */
		function geometry() {
			var rs = M.rows, n = rs.length, g = new Float64Array(4 * n),
			    pairs = Object.create(null), slot = new Int32Array(n),
			    key = [], i, r, p, q, dx, dy, len, off, m;

			for (i = 0; i < n; i++) {
				r = rs[i];
				key[i] = r.a < r.b ? r.a + "\u0000" + r.b :
				    r.b + "\u0000" + r.a;
				slot[i] = pairs[key[i]] || 0;
				pairs[key[i]] = slot[i] + 1;
			}
			for (i = 0; i < n; i++) {
				r = rs[i];
				p = at(r.a);
				q = at(r.b);
				m = pairs[key[i]];
				off = (slot[i] - (m - 1) / 2) * PAIR_GAP;
				dx = q[0] - p[0];
				dy = q[1] - p[1];
				len = Math.hypot(dx, dy) || 1;
				/* The normal (-dy, dx) / len, times the offset. */
				g[4 * i] = p[0] - dy / len * off;
				g[4 * i + 1] = p[1] + dx / len * off;
				g[4 * i + 2] = q[0] - dy / len * off;
				g[4 * i + 3] = q[1] + dx / len * off;
			}
			return g;
		}

		/* Whether the segment's box meets the view, grown by pad. */
		function visible(x1, y1, x2, y2, pad) {
			return Math.max(x1, x2) >= -pad && Math.min(x1, x2) <= M.W + pad &&
			    Math.max(y1, y2) >= -pad && Math.min(y1, y2) <= M.H + pad;
		}

		/* ---- drawing ---- */

		function invalidate() {
			if (M.queued)
				return;
			M.queued = true;
			requestAnimationFrame(function () {
				M.queued = false;
				draw();
			});
		}

		function path(list, close) {
			var i;
			ctx.beginPath();
			for (i = 0; i < list.length; i += 4) {
				ctx.moveTo(list[i], list[i + 1]);
				ctx.lineTo(list[i + 2], list[i + 3]);
			}
			if (close)
				ctx.closePath();
		}

		function strokeAll(list, colour, width, cap, dash) {
			if (list.length === 0)
				return;
			path(list);
			ctx.strokeStyle = colour;
			ctx.lineWidth = width;
			ctx.lineCap = cap;
			ctx.setLineDash(dash || []);
			ctx.stroke();
		}

		function draw() {
			if (M.fast && blit())
				return;
			full();
		}

		/*
		 * A frame of a drag: the last whole frame, moved.  Strokes have
		 * the same shape at the same zoom, so only the edges the move
		 * uncovers stay empty until the drag pauses or ends.  Returns
		 * false where the last frame cannot serve (another zoom or size).
		 */
		function blit() {
			var t0 = performance.now(), s = size(), v = M.view,
			    sv = M.snapView;
			if (!M.snap || v.k !== sv.k || M.snap.width !== canvas.width ||
			    M.snap.height !== canvas.height)
				return false;
			ctx.setTransform(1, 0, 0, 1, 0, 0);
			ctx.fillStyle = M.bg;
			ctx.fillRect(0, 0, canvas.width, canvas.height);
			ctx.drawImage(M.snap, Math.round((v.x - sv.x) * s),
			    Math.round((v.y - sv.y) * s));
			M.frames++;
			M.frameMs = performance.now() - t0;
			if (M.onframe)
				M.onframe(M.frameMs);
			return true;
		}

		/* A whole frame from the rows and the layout. */
		function full() {
			var t0 = performance.now(), s = size(), rs = M.rows,
			    n = rs.length, g, i, r, x1, y1, x2, y2, len, ux, uy, nx,
			    ny, casing = [], casingDown = [], byColour = new Map(),
			    downDirs = [], arrows = { "#111111": [], "#ffffff": [] },
			    crosses = [], badges = [], sel = -1, rep, list;

			ctx.setTransform(1, 0, 0, 1, 0, 0);
			ctx.fillStyle = M.bg;
			ctx.fillRect(0, 0, canvas.width, canvas.height);
			ctx.setTransform(s, 0, 0, s, 0, 0);
			rep = { dirs: [], crosses: [], over: [], nodes: [],
			    labels: [], culled: 0 };
			if (M.empty) {
				ctx.fillStyle = C.muted;
				ctx.font = "16px " + fontFamily();
				ctx.textAlign = "center";
				ctx.fillText(M.empty, M.W / 2, M.H / 2);
				finish(rep, new Float64Array(0), t0);
				return;
			}
			g = geometry();
			for (i = 0; i < n; i++) {
				r = rs[i];
				x1 = g[4 * i];
				y1 = g[4 * i + 1];
				x2 = g[4 * i + 2];
				y2 = g[4 * i + 3];
				if (!visible(x1, y1, x2, y2, CASING_W)) {
					rep.culled++;
					continue;
				}
				if (r.id === M.selected)
					sel = i;
				(r.down ? casingDown : casing).push(x1, y1, x2, y2);
				len = Math.hypot(x2 - x1, y2 - y1) || 1;
				ux = (x2 - x1) / len;
				uy = (y2 - y1) / len;
				nx = -uy;
				ny = ux;
				/* Each direction on the right-hand side of its travel. */
				dir(r, "a_to_b", r.ab, x1, y1, x2, y2, ux, uy, nx, ny);
				dir(r, "b_to_a", r.ba, x2, y2, x1, y1, -ux, -uy, -nx,
				    -ny);
				if (r.down) {
					crosses.push((x1 + x2) / 2, (y1 + y2) / 2);
					rep.crosses.push(r.id);
				}
			}

			function dir(row, d, v, ax, ay, bx, by, ux_, uy_, nx_, ny_) {
				var sx = ax + nx_ * DIR_OFF, sy = ay + ny_ * DIR_OFF,
				    ex = bx + nx_ * DIR_OFF, ey = by + ny_ * DIR_OFF,
				    l = Math.hypot(ex - sx, ey - sy), mx, my, a, b;

				rep.dirs.push([row.id, d, v.colour, v.util, row.down,
				    !!v.over, (sx + ex) / 2, (sy + ey) / 2, l]);
				if (row.down) {
					downDirs.push(sx, sy, ex, ey);
					return;
				}
				b = byColour.get(v.colour);
				if (b === undefined)
					byColour.set(v.colour, b = []);
				b.push(sx, sy, ex, ey);
				/* A small arrow past the middle shows the way. */
				if (l >= 24) {
					mx = sx + (ex - sx) * 0.58;
					my = sy + (ey - sy) * 0.58;
					arrows[v.ink].push(mx + ux_ * 3.5, my + uy_ * 3.5,
					    mx - ux_ * 2.5 + nx_ * 1.7, my - uy_ * 2.5 + ny_ * 1.7,
					    mx - ux_ * 2.5 - nx_ * 1.7, my - uy_ * 2.5 - ny_ * 1.7);
				}
				if (v.over) {
					/* An "!" badge beside the stroke: full by the policy. */
					a = [sx + (ex - sx) * 0.38 + nx_ * 9,
					    sy + (ey - sy) * 0.38 + ny_ * 9];
					badges.push(a[0], a[1]);
					rep.over.push([row.id, d]);
				}
			}

			/* Butt ends: the node marks cover them, and round ones
			   cost a third of a frame's rasterising. */
			strokeAll(casing, C.casing, CASING_W, "butt");
			strokeAll(casingDown, C.casingDown, CASING_W, "butt");
			byColour.forEach(function (list_, colour) {
				strokeAll(list_, colour, DIR_W, "butt");
			});
			strokeAll(downDirs, weftScale.DOWN, DIR_W, "butt", [6, 4]);
			ctx.setLineDash([]);
			Object.keys(arrows).forEach(function (ink) {
				var a = arrows[ink], k;
				if (a.length === 0)
					return;
				ctx.beginPath();
				for (k = 0; k < a.length; k += 6) {
					ctx.moveTo(a[k], a[k + 1]);
					ctx.lineTo(a[k + 2], a[k + 3]);
					ctx.lineTo(a[k + 4], a[k + 5]);
					ctx.closePath();
				}
				ctx.fillStyle = ink;
				ctx.fill();
			});
			list = [];
			for (i = 0; i < crosses.length; i += 2)
				list.push(crosses[i] - 7, crosses[i + 1] - 7,
				    crosses[i] + 7, crosses[i + 1] + 7,
				    crosses[i] - 7, crosses[i + 1] + 7,
				    crosses[i] + 7, crosses[i + 1] - 7);
			strokeAll(list, C.cross, 2.5, "round");
			if (sel >= 0)
				drawSelected(g, sel);
			drawBadges(badges);
			drawNodes(rep);
			finish(rep, g, t0);
		}

		/* The selected link again, on top: halo, casing, directions. */
		function drawSelected(g, i) {
			var r = M.rows[i], x1 = g[4 * i], y1 = g[4 * i + 1],
			    x2 = g[4 * i + 2], y2 = g[4 * i + 3],
			    len = Math.hypot(x2 - x1, y2 - y1) || 1,
			    nx = -(y2 - y1) / len * DIR_OFF, ny = (x2 - x1) / len * DIR_OFF;

			strokeAll([x1, y1, x2, y2], C.halo, CASING_W + 12, "round");
			strokeAll([x1, y1, x2, y2], C.casingSel, CASING_W + 5, "round");
			strokeAll([x1 + nx, y1 + ny, x2 + nx, y2 + ny], r.down ?
			    weftScale.DOWN : r.ab.colour, DIR_W, "butt",
			    r.down ? [6, 4] : null);
			strokeAll([x2 - nx, y2 - ny, x1 - nx, y1 - ny], r.down ?
			    weftScale.DOWN : r.ba.colour, DIR_W, "butt",
			    r.down ? [6, 4] : null);
			ctx.setLineDash([]);
		}

		function drawBadges(b) {
			var i;
			if (b.length === 0)
				return;
			ctx.beginPath();
			for (i = 0; i < b.length; i += 2) {
				ctx.moveTo(b[i] + 6.5, b[i + 1]);
				ctx.arc(b[i], b[i + 1], 6.5, 0, 2 * Math.PI);
			}
			ctx.fillStyle = C.badge;
			ctx.fill();
			ctx.strokeStyle = C.badgeRim;
			ctx.lineWidth = 1.5;
			ctx.stroke();
			ctx.fillStyle = "#ffffff";
			ctx.font = "bold 10px " + fontFamily();
			ctx.textAlign = "center";
			for (i = 0; i < b.length; i += 2)
				ctx.fillText("!", b[i], b[i + 1] + 3.5);
		}

		/* Nodes, then the labels that have room (their boxes to rep). */
		function drawNodes(rep) {
			var ns = M.nodes, i, p, xs = [], grid = new Set(),
			    w, cx0, cx1, cy0, cy1, cx, cy, free;

			var dot = sprite(), half = dot.width / dot.s / 2;
			for (i = 0; i < ns.length; i++) {
				p = at(ns[i].id);
				xs.push(p);
				rep.nodes.push([ns[i].id, p[0], p[1]]);
				if (!visible(p[0], p[1], p[0], p[1], NODE_R + 2))
					continue;
				ctx.drawImage(dot, p[0] - half, p[1] - half, 2 * half,
				    2 * half);
			}
			ctx.font = LABEL_PX + "px " + fontFamily();
			ctx.textAlign = "left";
			ctx.lineJoin = "round";
			ctx.strokeStyle = C.labelHalo;
			ctx.lineWidth = 3;
			ctx.fillStyle = C.label;
			for (i = 0; i < ns.length; i++) {
				p = xs[i];
				w = M.widths[ns[i].id];
				if (w === undefined)
					w = M.widths[ns[i].id] =
					    ctx.measureText(ns[i].id).width;
				/* The label's box: x + 6, baseline y - 6. */
				if (!visible(p[0] + 6, p[1] - 6 - LABEL_PX, p[0] + 6 + w,
				    p[1] - 3, 0))
					continue;
				cx0 = Math.floor((p[0] + 6) / CELL);
				cx1 = Math.floor((p[0] + 6 + w) / CELL);
				cy0 = Math.floor((p[1] - 6 - LABEL_PX) / CELL);
				cy1 = Math.floor((p[1] - 3) / CELL);
				free = true;
				for (cx = cx0; cx <= cx1 && free; cx++)
					for (cy = cy0; cy <= cy1 && free; cy++)
						free = !grid.has(cx * 65536 + cy);
				if (!free)
					continue;
				for (cx = cx0; cx <= cx1; cx++)
					for (cy = cy0; cy <= cy1; cy++)
						grid.add(cx * 65536 + cy);
				ctx.strokeText(ns[i].id, p[0] + 6, p[1] - 6);
				ctx.fillText(ns[i].id, p[0] + 6, p[1] - 6);
				rep.labels.push([ns[i].id, p[0] + 4, p[1] - 8 - LABEL_PX,
				    p[0] + 8 + w, p[1] - 1]);
			}
		}

		/*
		 * A node's mark drawn once at the device scale: a copy per node
		 * costs far less to rasterise than hundreds of circles in one
		 * path.
		 */
		function sprite() {
			var s = canvas.width / M.W, c, g, h;
			if (M.dot && M.dot.s === s)
				return M.dot;
			h = Math.ceil((NODE_R + 1.5) * s) + 1;
			c = document.createElement("canvas");
			c.width = c.height = 2 * h;
			g = c.getContext("2d");
			g.setTransform(s, 0, 0, s, h, h);
			g.beginPath();
			g.arc(0, 0, NODE_R, 0, 2 * Math.PI);
			g.fillStyle = C.node;
			g.fill();
			g.strokeStyle = C.nodeRim;
			g.lineWidth = 1.5;
			g.stroke();
			c.s = s;
			M.dot = c;
			return c;
		}

		function fontFamily() {
			if (!M.font)
				M.font = getComputedStyle(canvas).fontFamily ||
				    "sans-serif";
			return M.font;
		}

		function finish(rep, g, t0) {
			var sc;
			M.last = { rep: rep, g: g, view: { k: M.view.k, x: M.view.x,
			    y: M.view.y }, s: canvas.width / M.W };
			/* Kept for the frames of a drag (blit). */
			if (!M.snap)
				M.snap = document.createElement("canvas");
			if (M.snap.width !== canvas.width ||
			    M.snap.height !== canvas.height) {
				M.snap.width = canvas.width;
				M.snap.height = canvas.height;
			}
			sc = M.snap.getContext("2d", { alpha: false,
			    willReadFrequently: true });
			sc.drawImage(canvas, 0, 0);
			M.snapView = M.last.view;
			M.frames++;
			M.frameMs = M.fullMs = performance.now() - t0;
			if (M.onframe)
				M.onframe(M.frameMs);
		}

		/* ---- what the page calls ---- */

		/* The drawing's size in layout units (its height follows the map). */
		function setSize(w, h) {
			M.fast = false;
			M.W = w;
			M.H = h;
			canvas.style.aspectRatio = w + " / " + h;
			invalidate();
		}

		/* Node list [{id, ...}] and positions {id: {x, y}}, borrowed. */
		function setLayout(nodes, pos) {
			M.fast = false;
			M.nodes = nodes;
			M.pos = pos;
			M.widths = Object.create(null);
			invalidate();
		}

		/*
		 * Rows (one per link: id, a, b, down, and ab, ba with util and
		 * over), borrowed until the next call; each direction gets its
		 * colour and arrow ink here.  selected is a link id or null.
		 */
		function setRows(rows, selected, empty) {
			var i, r;
			for (i = 0; i < rows.length; i++) {
				r = rows[i];
				r.ab.colour = r.down ? weftScale.DOWN :
				    weftScale.css(r.ab.util);
				r.ba.colour = r.down ? weftScale.DOWN :
				    weftScale.css(r.ba.util);
				r.ab.ink = weftScale.ink(r.ab.util);
				r.ba.ink = weftScale.ink(r.ba.util);
			}
			M.fast = false;
			M.rows = rows;
			M.selected = selected;
			M.empty = empty || "";
			invalidate();
		}

		function setSelected(id) {
			M.fast = false;
			M.selected = id;
			invalidate();
		}

		/*
		 * The view (zoom k, shift x, y).  While moving (a drag), frames
		 * move the last whole frame (blit) and a whole frame follows
		 * once the view has rested SETTLE_MS or moving ends.
		 */
		function setView(v, moving) {
			M.view = v;
			clearTimeout(M.settle);
			M.fast = !!moving;
			if (moving)
				M.settle = setTimeout(function () {
					M.fast = false;
					invalidate();
				}, SETTLE_MS);
			invalidate();
		}

		function setBackground(c) {
			if (c !== M.bg) {
				M.fast = false;
				M.bg = c;
				invalidate();
			}
		}

		/*
		 * The link id whose axis (as the last frame drew it) lies
		 * nearest the screen point (x, y) within HIT_R, or null.
		 */
		function hit(x, y) {
			var g = M.last && M.last.g, best = null, bd = HIT_R * HIT_R,
			    i, x1, y1, dx, dy, t, ex, ey, d;

			if (!g || g.length !== 4 * M.rows.length)
				return null;
			for (i = 0; i < M.rows.length; i++) {
				x1 = g[4 * i];
				y1 = g[4 * i + 1];
				dx = g[4 * i + 2] - x1;
				dy = g[4 * i + 3] - y1;
				t = dx === 0 && dy === 0 ? 0 :
				    ((x - x1) * dx + (y - y1) * dy) / (dx * dx + dy * dy);
				t = Math.max(0, Math.min(1, t));
				ex = x1 + t * dx - x;
				ey = y1 + t * dy - y;
				d = ex * ex + ey * ey;
				if (d <= bd) {
					bd = d;
					best = M.rows[i].id;
				}
			}
			return best;
		}

		/* The id of the node whose mark covers the screen point (x, y)
		   in the last whole frame, or null. */
		function hitNode(x, y) {
			var ns = M.last ? M.last.rep.nodes : [], r = NODE_R + 2, i;
			for (i = ns.length - 1; i >= 0; i--)
				if (Math.abs(ns[i][1] - x) <= r && Math.abs(ns[i][2] - y) <= r)
					return ns[i][0];
			return null;
		}

		/* What the last frame drew (for tests), or null before one. */
		function drawn() {
			return M.last ? { dirs: M.last.rep.dirs,
			    crosses: M.last.rep.crosses, over: M.last.rep.over,
			    nodes: M.last.rep.nodes, labels: M.last.rep.labels,
			    node_r: NODE_R + 1.5,
			    culled: M.last.rep.culled, view: M.last.view,
			    scale: M.last.s, frames: M.frames, frame_ms: M.frameMs,
			    full_frame_ms: M.fullMs,
			    width: M.W, height: M.H } : null;
		}

		window.addEventListener("resize", invalidate);
		return { setSize: setSize, setLayout: setLayout, setRows: setRows,
		    setSelected: setSelected, setView: setView,
		    setBackground: setBackground, invalidate: invalidate,
		    hit: hit, hitNode: hitNode, drawn: drawn, drawNow: draw };
	}

	return { create: create };
})();
