/* SPDX-License-Identifier: GPL-3.0-or-later */
/* The network map page: plan, map, table, what-ifs, sweeps, live updates. */

/*
 * DESIGN
 * Everything comes from this daemon's own API; nothing else is fetched.
 * What the map and the table show of the live plan comes from GET
 * /v1/plan and /v1/plan/loads (with /v1/policy for the headroom), fetched
 * together and again until plan and loads name one plan revision.  The
 * topology (coordinates, names, SRLGs) is read before the first drawing
 * and again after each new plan, in the background: the map is relaid out
 * only when its nodes, coordinates or links changed.  The routes (which
 * demands cross a link) are read only when the link panel needs them,
 * once per plan revision.  What the map and the table show is a "view":
 * the live plan, a what-if answer
 * (POST /v1/whatif; its links[] replace the loads) or a sweep's worst case
 * (its report's links[]).  Every view has the same rows, one per link with
 * both directions, so one drawing routine serves all three and a banner
 * says which one is shown.  The map itself is a canvas (canvas.js): a new
 * plan only recolours it, a pan or zoom only redraws it, one frame per
 * displayed frame.  The table keeps one row element per link and changes
 * only the cells whose text changed.  New plans arrive through the event stream
 * (GET /v1/events, event "plan"); when the daemon has no stream (the
 * EventSource fails for good, as on a 404) the page polls GET /v1/plan
 * every POLL_MS instead.  A daemon that wants a bearer token (docs/api.md,
 * Authentication) answers 401: the page then shows a token field, keeps
 * the token in sessionStorage only (never in a URL) and sends it as
 * "Authorization: Bearer" with every later fetch.  An EventSource cannot
 * send that header, so once a read has needed a token the page polls
 * with fetch instead of streaming.  Node positions are kept while the
 * nodes and their coordinates stay the same, so a new plan only recolours
 * the map.
 * For tests, window.weftMap exposes the state, and weftMap.drawn() what
 * the last frame of the map drew: every direction with its colour and
 * utilisation, the crosses, the badges and the nodes.
 */

"use strict";

(function () {
	/* The drawing is W wide; its height follows the map's shape. */
	var W = 1000, H = 640, H_MIN = 480, H_MAX = 820, MARGIN = 40;
	var POLL_MS = 3000;
	var PAN_STEP = 40;		/* an arrow key's pan, drawing units */
	var SVGNS = "http://www.w3.org/2000/svg";
	var DEMANDS_SHOWN = 40;		/* per direction in the link panel */
	var TOKEN_KEY = "weft.token";	/* in sessionStorage only */

	var S = {
		topo: null, policy: null, plan: null, loads: null,
		crossing: null,		/* {rev, links: link id -> {a_to_b: {},
					   b_to_a: {}}, null while asked}
					   (needRoutes) */
		tableQueued: false,	/* a drawTable() is due (tableSoon) */
		topoSeq: 0,		/* the newest topology read */
		rows: [], rowById: {},	/* the view's rows (rows()) */
		scene: null,		/* the canvas (canvas.js) */
		pos: {}, layoutKey: "",
		mode: "live",		/* "live", "whatif", "sweep" */
		whatif: null,		/* {req, res} */
		sweep: null,		/* {id, sweep} shown on the map */
		sweepShown: null,	/* the sweep in the sweep panel */
		selected: null, hovered: null,
		sortKey: "id", sortAsc: true,
		view: { k: 1, x: 0, y: 0 },
		live: "connecting", es: null, pollTimer: null, sweepsRead: 0,
		loading: false, again: false,
		token: "",		/* bearer token, "" for none */
		readsNeedToken: false,	/* a read without a token got 401 */
	};
	window.weftMap = { state: S, scale: weftScale };

	/* A map keyed by ids: no inherited keys ("constructor", ...). */
	function dict() {
		return Object.create(null);
	}

	function $(id) {
		return document.getElementById(id);
	}

	function el(tag, attrs, text) {
		var e = document.createElement(tag), k;
		for (k in attrs || {})
			e.setAttribute(k, attrs[k]);
		if (text !== undefined)
			e.textContent = text;
		return e;
	}

	function svg(tag, attrs, parent) {
		var e = document.createElementNS(SVGNS, tag), k;
		for (k in attrs || {})
			e.setAttribute(k, attrs[k]);
		if (parent)
			parent.appendChild(e);
		return e;
	}

	/* ---- numbers for people ---- */

	function fmtRate(bps) {
		var pre = ["", "k", "M", "G", "T", "P"], i = 0;
		if (typeof bps !== "number" || !isFinite(bps))
			return "n/a";
		while (Math.abs(bps) >= 1000 && i + 1 < pre.length) {
			bps /= 1000;
			i++;
		}
		return (Math.abs(bps) >= 100 ? bps.toFixed(0) : bps.toPrecision(3)) +
		    " " + pre[i] + "bit/s";
	}

	function fmtPct(u) {
		if (typeof u !== "number" || !isFinite(u))
			return "n/a";
		return (100 * u).toFixed(1) + " %";
	}

	/* ---- talking to the daemon ---- */

	/* The headers of every request: the token when there is one. */
	function authHeaders() {
		var h = {};
		if (S.token)
			h.Authorization = "Bearer " + S.token;
		return h;
	}

	/* Resolves to {status, body} (body parsed JSON or null); never throws
	   for an HTTP error status.  A 401 or 403 asks for a token. */
	function api(method, path, body) {
		var opts = { method: method, headers: authHeaders() },
		    sent = S.token;
		if (body !== undefined) {
			opts.body = JSON.stringify(body);
			opts.headers["Content-Type"] = "application/json";
		}
		return fetch(path, opts).then(function (r) {
			return r.text().then(function (t) {
				var j = null, res;
				try {
					j = t ? JSON.parse(t) : null;
				} catch (e) {
					j = null;
				}
				res = { status: r.status, body: j };
				if (r.status === 401 || r.status === 403)
					askToken(method, res, sent);
				return res;
			});
		});
	}

	/* A GET of path with the token, as a blob: URL (an <img> or a link
	   cannot send the header). */
	function blobUrl(path) {
		return fetch(path, { headers: authHeaders() }).then(function (r) {
			if (!r.ok)
				throw new Error("HTTP " + r.status);
			return r.blob();
		}).then(function (b) {
			return URL.createObjectURL(b);
		});
	}

	/* ---- the bearer token (docs/api.md, Authentication) ---- */

	function loadToken() {
		try {
			S.token = window.sessionStorage.getItem(TOKEN_KEY) || "";
		} catch (e) {
			S.token = "";
		}
	}

	function saveToken(t) {
		S.token = t;
		try {
			if (t)
				window.sessionStorage.setItem(TOKEN_KEY, t);
			else
				window.sessionStorage.removeItem(TOKEN_KEY);
		} catch (e) {
			/* No storage: the token lasts as long as the page. */
		}
	}

	/* After a 401 or 403 (r) to method, sent with token sent (or none). */
	function askToken(method, r, sent) {
		var text;
		if (r.status === 401 && sent) {
			/* A bad token spoils every request, even open ones. */
			if (S.token === sent)
				saveToken("");
			text = "The daemon did not accept the token (unknown or " +
			    "revoked). Enter another one.";
		} else if (r.status === 401) {
			text = "The daemon wants a bearer token for this " +
			    "(weftd token add makes one).";
			if (method === "GET")
				readsNeedToken();
		} else {
			text = "The token's role is too low for that; enter one " +
			    "with a higher role.";
		}
		$("token-text").textContent = text;
		$("token-box").hidden = false;
		document.body.dataset.token = "wanted";
	}

	/* EventSource cannot send the token: poll with fetch from now on. */
	function readsNeedToken() {
		if (S.readsNeedToken)
			return;
		S.readsNeedToken = true;
		if (S.es) {
			S.es.close();
			S.es = null;
		}
		startPolling();
	}

	function useToken(ev) {
		var t = $("token-input").value.trim();
		ev.preventDefault();
		if (!/^[!-~]+$/.test(t)) {
			$("token-text").textContent = "A token is one word of " +
			    "printable ASCII.";
			return;
		}
		saveToken(t);
		$("token-input").value = "";
		$("token-box").hidden = true;
		document.body.dataset.token = "set";
		loadLive();
		loadSweeps();
	}

	function errText(r) {
		var e = r.body && r.body.error;
		if (!e)
			return "HTTP " + r.status;
		return e.message + (e.where ? " (at " + e.where + ")" : "") +
		    " [" + e.code + "]";
	}

	function message(text) {
		var m = $("message");
		m.textContent = text || "";
		m.hidden = !text;
	}

	/* ---- the live plan ---- */

	function loadLive() {
		if (S.loading) {
			S.again = true;
			return Promise.resolve();
		}
		S.loading = true;
		return fetchLive(0).then(function () {
			S.loading = false;
			if (S.again) {
				S.again = false;
				return loadLive();
			}
		}, function (err) {
			S.loading = false;
			message("Cannot read the plan: " + err);
			document.body.dataset.state = "error";
		});
	}

	function fetchLive(attempt) {
		var reads = [api("GET", "/v1/plan"), api("GET", "/v1/plan/loads"),
		    api("GET", "/v1/policy")];

		/* The first drawing needs the coordinates; later ones do not
		   wait for them (refreshTopology). */
		if (!S.topo)
			reads.push(api("GET", "/v1/topology"));
		return Promise.all(reads).then(function (rs) {
			var plan = rs[0], loads = rs[1];
			if (plan.status === 503) {
				$("plan-status").textContent = "No plan has been " +
				    "published yet; waiting\u2026";
				return new Promise(function (res) {
					setTimeout(res, 1500);
				}).then(function () {
					return fetchLive(attempt);
				});
			}
			for (var i = 0; i < rs.length; i++)
				if (rs[i].status !== 200)
					throw errText(rs[i]);
			if (plan.body.revision !== loads.body.revision && attempt < 5)
				return fetchLive(attempt + 1);
			message("");
			S.plan = plan.body;
			S.loads = loads.body;
			S.policy = rs[2].body;
			if (rs[3])
				S.topo = rs[3].body;
			else
				refreshTopology();
			if (S.crossing && S.crossing.rev !== S.plan.revision)
				S.crossing = null;
			fillWhatifForm();
			render();
			document.body.dataset.revision = String(S.plan.revision);
			document.body.dataset.state = "ready";
		});
	}

	/* Reads the topology again; draws again only if what the map or the
	   link panel shows of it changed. */
	function refreshTopology() {
		var seq = ++S.topoSeq;
		api("GET", "/v1/topology").then(function (r) {
			var old = S.topo;
			if (r.status !== 200 || seq !== S.topoSeq)
				return;
			S.topo = r.body;
			if (JSON.stringify(old) !== JSON.stringify(S.topo)) {
				fillWhatifForm();
				render();
			}
		}, function () {});
	}

	/*
	 * The demands crossing link id in the shown plan, read when the link
	 * panel first needs them: GET /v1/plan/routes?link=ID returns only
	 * those demands, so a full matrix (hundreds of thousands of demands)
	 * is never fetched whole.  Kept per link for the plan revision in
	 * S.crossing ({rev, links: id -> index, or null while asked}).
	 */
	function needRoutes(id) {
		var rev = S.plan ? S.plan.revision : -1;

		if (!S.crossing || S.crossing.rev !== rev)
			S.crossing = { rev: rev, links: dict() };
		if (S.crossing.links[id] !== undefined)
			return;
		S.crossing.links[id] = null;
		api("GET", "/v1/plan/routes?link=" + encodeURIComponent(id)).then(
		    function (r) {
			var c = S.crossing;
			if (!c || c.links[id] !== null)
				return;
			if (r.status !== 200 || r.body.revision !== c.rev) {
				/* A newer plan: loadLive follows it. */
				delete c.links[id];
				return;
			}
			c.links[id] = indexRoutes(id, r.body.routes);
			showInfo(S.selected || S.hovered);
		}, function () {
			if (S.crossing && S.crossing.links[id] === null)
				delete S.crossing.links[id];
		});
	}

	/* Which of routes cross link id, in which direction, at what rate. */
	function indexRoutes(id, routes) {
		var idx = { a_to_b: dict(), b_to_a: dict() }, l = null, i, j, k,
		    r, p, dir, key, e;

		S.loads.links.forEach(function (x) {
			if (x.id === id)
				l = x;
		});
		for (i = 0; l && i < routes.length; i++) {
			r = routes[i];
			for (j = 0; j < r.paths.length; j++) {
				p = r.paths[j];
				for (k = 0; k < p.links.length; k++) {
					if (p.links[k] !== id)
						continue;
					dir = p.nodes[k] === l.a ? "a_to_b" : "b_to_a";
					key = String(i);
					e = idx[dir][key];
					if (!e)
						e = idx[dir][key] = { route: r, rate: 0 };
					e.rate += p.rate_bps;
				}
			}
		}
		return idx;
	}

	function headroom() {
		if (S.mode === "sweep" && S.sweep && S.sweep.sweep.report)
			return S.sweep.sweep.report.headroom;
		if (S.mode === "whatif" && S.whatif.req.policy &&
		    typeof S.whatif.req.policy.headroom === "number")
			return S.whatif.req.policy.headroom;
		return S.policy ? S.policy.headroom : 1;
	}

	/* ---- the view: one row per link, whatever is shown ---- */

	function dirOf(d, cap, hr) {
		var load = d ? d.load_bps : 0, util = d ? d.utilization : 0;
		return { load: load, util: util,
		    headroom_bps: d && typeof d.headroom_bps === "number" ?
		    d.headroom_bps : cap * hr - load };
	}

	function rows() {
		var hr = headroom(), wl = dict(), failed = dict(), worst = dict(),
		    out = [];

		if (S.mode === "whatif") {
			S.whatif.res.links.forEach(function (l) {
				wl[l.link] = l;
			});
			(S.whatif.res.scenario.failed_links || []).forEach(
			    function (id) {
				failed[id] = true;
			});
		} else if (S.mode === "sweep") {
			S.sweep.sweep.report.links.forEach(function (d) {
				worst[d.link + "\u0000" + d.from] = d;
			});
		}
		S.loads.links.forEach(function (l) {
			var row = { id: l.id, a: l.a, b: l.b, capacity: l.capacity_bps,
			    te_metric: l.te_metric, state: l.state,
			    down: l.state !== "up" }, ab, ba, w;

			if (S.mode === "whatif") {
				w = wl[l.id];
				ab = dirOf(w ? w.a_to_b : null, l.capacity_bps, hr);
				ba = dirOf(w ? w.b_to_a : null, l.capacity_bps, hr);
				if (failed[l.id]) {
					row.down = true;
					row.state = "down (what-if)";
				}
			} else if (S.mode === "sweep") {
				w = worst[l.id + "\u0000" + l.a];
				ab = { load: w ? w.worst_load_bps : 0,
				    util: w ? w.worst_utilization : 0 };
				w = worst[l.id + "\u0000" + l.b];
				ba = { load: w ? w.worst_load_bps : 0,
				    util: w ? w.worst_utilization : 0 };
			} else {
				ab = dirOf(l.a_to_b, l.capacity_bps, hr);
				ba = dirOf(l.b_to_a, l.capacity_bps, hr);
			}
			row.ab = ab;
			row.ba = ba;
			row.ab_load = ab.load;
			row.ab_util = ab.util;
			row.ba_load = ba.load;
			row.ba_util = ba.util;
			row.max_util = Math.max(ab.util || 0, ba.util || 0);
			ab.over = !row.down && isOver(ab.util, hr);
			ba.over = !row.down && isOver(ba.util, hr);
			row.over = ab.over || ba.over;
			out.push(row);
		});
		return out;
	}

	/* At or above the headroom: the direction is full by the policy. */
	function isOver(u, hr) {
		return typeof u === "number" && u >= hr * (1 - 1e-9) && u > 0;
	}

	/* ---- drawing ---- */

	function render() {
		if (!S.loads)
			return;
		var rs = rows(), byId = dict();
		rs.forEach(function (r) {
			byId[r.id] = r;
		});
		S.rows = rs;
		S.rowById = byId;
		layout();
		drawMap(rs);
		drawLegend();
		tableSoon();
		drawStatus();
		drawBanner();
		showInfo(S.selected || S.hovered);
	}

	function layout() {
		var nodes = [], seen = dict(), edges = [], key, a;

		(S.topo ? S.topo.nodes : []).forEach(function (n) {
			nodes.push(n);
			seen[n.id] = true;
		});
		S.loads.links.forEach(function (l) {
			[l.a, l.b].forEach(function (id) {
				if (!seen[id]) {
					nodes.push({ id: id });
					seen[id] = true;
				}
			});
			edges.push([l.a, l.b]);
		});
		key = JSON.stringify([nodes.map(function (n) {
			return [n.id, n.lat, n.lon];
		}), edges]);
		if (key === S.layoutKey)
			return;
		S.layoutKey = key;
		S.nodes = nodes;
		/* A tall country gets a tall drawing, a wide one a wide one. */
		a = weftLayout.aspect(nodes);
		H = a === null ? 640 : Math.round(Math.min(H_MAX, Math.max(H_MIN,
		    (W - 2 * MARGIN) * a + 2 * MARGIN)));
		S.pos = weftLayout.place(nodes, edges, W, H, MARGIN);
		S.scene.setSize(W, H);
		S.scene.setLayout(nodes, S.pos);
	}

	/* The map: colours and marks of the rows; the canvas draws them in
	   its next frame. */
	function drawMap(rs) {
		var empty = rs.length === 0 && (!S.nodes || S.nodes.length === 0);
		S.scene.setBackground(getComputedStyle($("map")).backgroundColor);
		S.scene.setRows(rs, S.selected, empty ? "The topology is empty." :
		    "");
	}

	/* The text of a link's tooltip on the map. */
	function linkTitle(r) {
		return r.id + ": " + r.a + " \u2194 " + r.b +
		    (r.down ? " (down)" : "") + "\n" + r.a + " \u2192 " + r.b +
		    " " + fmtPct(r.ab.util) + ", " + r.b + " \u2192 " + r.a + " " +
		    fmtPct(r.ba.util);
	}

	function drawLegend() {
		var lg = $("legend"), x0 = 12, w = 360, y = 22, hr = headroom(),
		    defs, grad, i, x, g;

		while (lg.firstChild)
			lg.removeChild(lg.firstChild);
		defs = svg("defs", {}, lg);
		grad = svg("linearGradient", { id: "util-ramp", x1: 0, x2: 1,
		    y1: 0, y2: 0 }, defs);
		weftScale.STOPS.forEach(function (s) {
			svg("stop", { offset: s[0], "stop-color": s[1] }, grad);
		});
		svg("text", { x: x0, y: 12, "font-size": 11, "font-weight":
		    "bold" }, lg).textContent = S.mode === "sweep" ?
		    "worst-case utilisation (load / capacity)" :
		    "utilisation (load / capacity)";
		svg("rect", { x: x0, y: y, width: w, height: 12, fill:
		    "url(#util-ramp)", stroke: "#3a3a36", "stroke-width": 0.8 },
		    lg);
		for (i = 0; i <= 5; i++) {
			x = x0 + w * i / 5;
			svg("line", { x1: x, x2: x, y1: y + 12, y2: y + 17,
			    stroke: "#3a3a36" }, lg);
			svg("text", { x: x, y: y + 28, "font-size": 10,
			    "text-anchor": "middle" }, lg).textContent = (20 * i) + " %";
		}
		if (typeof hr === "number" && hr > 0 && hr <= 1) {
			x = x0 + w * hr;
			svg("line", { "class": "legend-headroom", x1: x, x2: x,
			    y1: y - 4, y2: y + 16, stroke: "#111", "stroke-width": 2,
			    "stroke-dasharray": "3 2" }, lg);
			svg("text", { x: Math.min(x, x0 + w), y: y + 40, "font-size": 10,
			    "text-anchor": "end" }, lg).textContent = "headroom " +
			    fmtPct(hr);
		}
		/* Marks: full by the policy, failed. */
		g = svg("g", { "class": "over-mark" }, lg);
		svg("circle", { cx: 400, cy: 28, r: 6.5, fill: "#111",
		    stroke: "#fff" }, g);
		svg("text", { x: 400, y: 31.5, "text-anchor": "middle", fill: "#fff",
		    "font-size": 10, "font-weight": "bold" }, g).textContent = "!";
		svg("text", { x: 412, y: 32, "font-size": 11 }, lg).textContent =
		    "at or above the headroom";
		svg("line", { x1: 392, x2: 430, y1: 52, y2: 52, stroke:
		    weftScale.DOWN, "stroke-width": 4, "stroke-dasharray": "6 4" },
		    lg);
		g = svg("g", { stroke: "#1d1d1b", "stroke-width": 2 }, lg);
		svg("line", { x1: 406, y1: 47, x2: 416, y2: 57 }, g);
		svg("line", { x1: 406, y1: 57, x2: 416, y2: 47 }, g);
		svg("text", { x: 436, y: 56, "font-size": 11 }, lg).textContent =
		    "failed (down)";
	}

	/*
	 * Text in natural order: runs of digits compare as numbers ("L2"
	 * before "L10"), other runs by code unit; equal so far, fewer runs
	 * first, then the plain strings.
	 */
	function natCmp(a, b) {
		var ca = a.match(/[0-9]+|[^0-9]+/g) || [],
		    cb = b.match(/[0-9]+|[^0-9]+/g) || [], i, x, y, dx, dy;

		for (i = 0; i < ca.length && i < cb.length; i++) {
			x = ca[i];
			y = cb[i];
			dx = x[0] >= "0" && x[0] <= "9";
			dy = y[0] >= "0" && y[0] <= "9";
			if (dx && dy) {
				x = x.replace(/^0+(?=[0-9])/, "");
				y = y.replace(/^0+(?=[0-9])/, "");
				if (x.length !== y.length)
					return x.length < y.length ? -1 : 1;
			}
			if (x !== y)
				return x < y ? -1 : 1;
		}
		if (ca.length !== cb.length)
			return ca.length < cb.length ? -1 : 1;
		return a < b ? -1 : a > b ? 1 : 0;
	}

	/* The table's order: the chosen column, then the link id. */
	function cmpRows(a, b) {
		var k = S.sortKey, x = a[k], y = b[k], c;
		if (typeof x === "number" || typeof y === "number") {
			x = typeof x === "number" && isFinite(x) ? x : -Infinity;
			y = typeof y === "number" && isFinite(y) ? y : -Infinity;
			c = x < y ? -1 : x > y ? 1 : 0;
		} else {
			c = natCmp(String(x), String(y));
		}
		if (!S.sortAsc)
			c = -c;
		if (c === 0)
			c = natCmp(a.id, b.id);
		return c;
	}

	function utilCell(tr, u, over) {
		var td = el("td", { "class": "num" });
		var sw = el("span", { "class": "swatch" });
		sw.style.background = weftScale.css(u);
		td.appendChild(sw);
		td.appendChild(document.createTextNode(fmtPct(u) +
		    (over ? " !" : "")));
		tr.appendChild(td);
	}

	/*
	 * The table after the map: its cells and their layout cost more than
	 * a frame of the map on a large network, so the map's new colours
	 * reach the screen first and the table follows in a task of its own.
	 * body[data-table] names the plan revision and view it shows.
	 */
	function tableSoon() {
		if (S.tableQueued)
			return;
		S.tableQueued = true;
		requestAnimationFrame(function () {
			setTimeout(function () {
				S.tableQueued = false;
				drawTable(S.rows);
			}, 0);
		});
	}

	/* A row's cells, anew (the row's text changed). */
	function fillRow(tr, r) {
		while (tr.firstChild)
			tr.removeChild(tr.firstChild);
		tr.appendChild(el("td", {}, r.id));
		tr.appendChild(el("td", {}, r.a));
		tr.appendChild(el("td", {}, r.b));
		tr.appendChild(el("td", {}, r.state));
		tr.appendChild(el("td", { "class": "num" }, fmtRate(r.capacity)));
		tr.appendChild(el("td", { "class": "num" }, fmtRate(r.ab_load)));
		utilCell(tr, r.ab_util, r.ab.over);
		tr.appendChild(el("td", { "class": "num" }, fmtRate(r.ba_load)));
		utilCell(tr, r.ba_util, r.ba.over);
		tr.appendChild(el("td", { "class": "num maxu", "data-value":
		    String(r.max_util) }, fmtPct(r.max_util)));
	}

	/*
	 * The table: one row element per link, kept from one drawing to the
	 * next; a row's cells are made again only when its text changed, and
	 * the rows are moved only when the order changed.
	 */
	function drawTable(rs) {
		var tb = $("links-table").tBodies[0], keep = S.tableRows || dict(),
		    next = dict(), order, same, frag, id;

		rs = rs.slice().sort(cmpRows);
		order = rs.map(function (r) {
			return r.id;
		});
		rs.forEach(function (r) {
			var t = keep[r.id], sig = [r.a, r.b, r.state, r.capacity,
			    r.ab_load, r.ab_util, r.ab.over, r.ba_load, r.ba_util,
			    r.ba.over, r.max_util].join("\u0000"), cls;
			if (!t) {
				t = { tr: el("tr", { "data-link": r.id }), sig: null };
				t.tr.addEventListener("click", function () {
					select(S.selected === r.id ? null : r.id);
				});
			}
			if (t.sig !== sig) {
				fillRow(t.tr, r);
				t.sig = sig;
			}
			cls = ((r.down ? "down " : "") + (r.over ? "over " : "") +
			    (S.selected === r.id ? "selected" : "")).trim();
			if (t.tr.getAttribute("class") !== cls)
				t.tr.setAttribute("class", cls);
			next[r.id] = t;
		});
		for (id in keep)
			if (!next[id] && keep[id].tr.parentNode === tb)
				tb.removeChild(keep[id].tr);
		same = S.tableOrder && S.tableOrder.length === order.length &&
		    order.every(function (x, i) {
			return S.tableOrder[i] === x;
		});
		if (!same) {
			frag = document.createDocumentFragment();
			order.forEach(function (x) {
				frag.appendChild(next[x].tr);
			});
			tb.appendChild(frag);
		}
		S.tableRows = next;
		S.tableOrder = order;
		document.body.dataset.table = (S.plan ? S.plan.revision : "") +
		    " " + S.mode;
		Array.prototype.forEach.call($("links-table").tHead.rows[0].cells,
		    function (th) {
			if (th.dataset.key === S.sortKey)
				th.setAttribute("aria-sort", S.sortAsc ? "ascending" :
				    "descending");
			else
				th.removeAttribute("aria-sort");
		});
		$("links-caption").textContent = "(" + rs.length + ", " +
		    (S.mode === "live" ? "live plan" : S.mode === "whatif" ?
		    "what-if" : "sweep worst case") + ")";
	}

	function drawStatus() {
		var p = S.plan, t;
		if (!p)
			return;
		t = "Plan " + p.revision + " (model " + p.model_revision + "): " +
		    p.status;
		if (p.status !== "failed") {
			t += ", " + p.objective + ", max utilisation " +
			    fmtPct(p.max_utilization) + ", carried " +
			    fmtRate(p.carried_bps) + ", unserved " +
			    fmtRate(p.unserved_bps);
		}
		if (p.matrix)
			t += ", matrix " + p.matrix;
		$("plan-status").textContent = t;
	}

	function drawBanner() {
		var b = $("mode-banner"), t, w, req, fl;

		document.body.dataset.mode = S.mode;
		if (S.mode === "live") {
			b.hidden = true;
			return;
		}
		if (S.mode === "whatif") {
			w = S.whatif.res;
			req = S.whatif.req;
			fl = w.scenario.failed_links || [];
			t = "What-if, not the live plan: " + (fl.length ?
			    "links down " + fl.join(", ") : "no link down") +
			    (req.fail && req.fail.nodes ? "; nodes failed " +
			    req.fail.nodes.join(", ") : "") + "; demand \u00d7 " +
			    (req.scale === undefined ? 1 : req.scale) +
			    ". Max utilisation " + fmtPct(w.plan.max_utilization) +
			    " (live " + fmtPct(w.compare.live.max_utilization) +
			    "), unserved " + fmtRate(w.plan.unserved_bps) + ".";
		} else {
			t = "Sweep " + S.sweep.id + " (" + S.sweep.sweep.kind +
			    "), worst case: every link direction at its worst " +
			    "utilisation over the sweep's scenarios, not the live plan.";
		}
		$("mode-text").textContent = t;
		b.hidden = false;
	}

	/* ---- the link panel ---- */

	/* Pins link id (or none) in the panel, the map and the table. */
	function select(id) {
		var old = S.selected, t = S.tableRows || dict();
		S.selected = id;
		S.scene.setSelected(id);
		if (old && t[old])
			t[old].tr.classList.remove("selected");
		if (id && t[id])
			t[id].tr.classList.add("selected");
		showInfo(id || S.hovered);
	}

	function crossingList(id, dir, from, to) {
		var rev = S.plan ? S.plan.revision : -1,
		    c = S.crossing && S.crossing.rev === rev ?
		    S.crossing.links[id] : undefined, list = [], ul, k,
		    frag = document.createDocumentFragment();
		frag.appendChild(el("h3", {}, "Demands " + from + " \u2192 " + to));
		if (!c) {
			needRoutes(id);
			frag.appendChild(el("p", { "class": "muted" },
			    "reading the routes\u2026"));
			return frag;
		}
		for (k in c[dir])
			list.push(c[dir][k]);
		list.sort(function (x, y) {
			return y.rate - x.rate;
		});
		if (list.length === 0) {
			frag.appendChild(el("p", { "class": "muted none",
			    "data-dir": dir, "data-count": "0" }, "none"));
			return frag;
		}
		ul = el("ul", { "class": "demands", "data-dir": dir,
		    "data-count": String(list.length) });
		list.slice(0, DEMANDS_SHOWN).forEach(function (e) {
			ul.appendChild(el("li", {}, e.route.src + " \u2192 " +
			    e.route.dst + " (priority " + e.route.priority + "): " +
			    fmtRate(e.rate)));
		});
		if (list.length > DEMANDS_SHOWN)
			ul.appendChild(el("li", { "class": "muted" }, "and " +
			    (list.length - DEMANDS_SHOWN) + " more"));
		frag.appendChild(ul);
		return frag;
	}

	function showInfo(id) {
		var body = $("info-body"), r, dl, t, tl, srlgs = [];

		while (body.firstChild)
			body.removeChild(body.firstChild);
		r = id ? S.rowById[id] : null;
		if (!r) {
			body.appendChild(el("p", { "class": "muted" }, "Hover or " +
			    "click a link on the map or in the table."));
			return;
		}
		if (S.topo)
			S.topo.links.forEach(function (l) {
				if (l.id === id)
					srlgs = l.srlgs || [];
			});
		body.dataset.link = id;
		body.appendChild(el("h3", {}, r.id + ": " + r.a + " \u2194 " + r.b +
		    (S.selected === id ? " (pinned)" : "")));
		dl = el("dl", { "class": "kv" });
		[["state", r.state], ["capacity", fmtRate(r.capacity) +
		    " each way"], ["TE metric", String(r.te_metric)],
		    ["SRLGs", srlgs.length ? srlgs.join(", ") : "none"]]
		    .forEach(function (kv) {
			dl.appendChild(el("dt", {}, kv[0]));
			dl.appendChild(el("dd", {}, kv[1]));
		});
		body.appendChild(dl);
		t = el("table", { "class": "dirs" });
		tl = el("tr");
		["direction", "load", "utilisation"].concat(S.mode === "sweep" ?
		    [] : ["headroom"]).forEach(function (h) {
			tl.appendChild(el("th", {}, h));
		});
		t.appendChild(tl);
		[[r.a, r.b, r.ab], [r.b, r.a, r.ba]].forEach(function (x) {
			var tr = el("tr");
			tr.appendChild(el("td", {}, x[0] + " \u2192 " + x[1]));
			tr.appendChild(el("td", { "class": "num" }, fmtRate(x[2].load)));
			utilCell(tr, x[2].util, x[2].over);
			if (S.mode !== "sweep")
				tr.appendChild(el("td", { "class": "num" },
				    fmtRate(x[2].headroom_bps)));
			t.appendChild(tr);
		});
		body.appendChild(t);
		if (S.mode !== "live")
			body.appendChild(el("p", { "class": "muted" }, "Demands " +
			    "below are those of the live plan."));
		body.appendChild(crossingList(id, "a_to_b", r.a, r.b));
		body.appendChild(crossingList(id, "b_to_a", r.b, r.a));
	}

	/* ---- the what-if form ---- */

	/* The options of a select list: texts[i] for value values[i],
	   made again only when they changed; the selection is kept. */
	function fillSelect(sel, values, texts) {
		var sig = JSON.stringify([values, texts]), keep = dict(), frag, i,
		    o, opts = sel.options;
		if (sel.dataset.sig === sig)
			return;
		if (opts.length === values.length && values.every(function (v, j) {
			return opts[j].value === v;
		})) {
			/* The same options: only their texts change (a link's
			   state). */
			for (i = 0; i < values.length; i++)
				if (opts[i].textContent !== texts[i])
					opts[i].textContent = texts[i];
			sel.dataset.sig = sig;
			return;
		}
		Array.prototype.forEach.call(sel.selectedOptions, function (x) {
			keep[x.value] = true;
		});
		frag = document.createDocumentFragment();
		for (i = 0; i < values.length; i++) {
			o = el("option", { value: values[i] }, texts[i]);
			o.selected = !!keep[values[i]];
			frag.appendChild(o);
		}
		while (sel.firstChild)
			sel.removeChild(sel.firstChild);
		sel.appendChild(frag);
		sel.dataset.sig = sig;
	}

	function fillWhatifForm() {
		var nodes = S.topo ? S.topo.nodes : [];
		fillSelect($("wf-links"), S.loads.links.map(function (l) {
			return l.id;
		}), S.loads.links.map(function (l) {
			return l.id + " (" + l.a + " \u2194 " + l.b + ")" +
			    (l.state !== "up" ? ", down" : "");
		}));
		fillSelect($("wf-nodes"), nodes.map(function (n) {
			return n.id;
		}), nodes.map(function (n) {
			return n.id + (n.name ? " (" + n.name + ")" : "");
		}));
	}

	function toggleFail(id) {
		Array.prototype.forEach.call($("wf-links").options, function (o) {
			if (o.value === id)
				o.selected = !o.selected;
		});
	}

	function runWhatif(ev) {
		var links, nodes, scale, req = {}, out = $("whatif-result");

		ev.preventDefault();
		links = Array.prototype.map.call($("wf-links").selectedOptions,
		    function (o) {
			return o.value;
		});
		nodes = Array.prototype.map.call($("wf-nodes").selectedOptions,
		    function (o) {
			return o.value;
		});
		scale = Number($("wf-scale").value);
		if (!isFinite(scale) || scale < 0) {
			out.textContent = "The scale must be a number >= 0.";
			return;
		}
		if (links.length || nodes.length) {
			req.fail = {};
			if (links.length)
				req.fail.links = links;
			if (nodes.length)
				req.fail.nodes = nodes;
		}
		req.scale = scale;
		$("wf-run").disabled = true;
		out.textContent = "Solving the what-if\u2026";
		document.body.dataset.whatif = "running";
		api("POST", "/v1/whatif", req).then(function (r) {
			$("wf-run").disabled = false;
			if (r.status !== 200) {
				out.textContent = "The what-if failed: " + errText(r);
				document.body.dataset.whatif = "error";
				return;
			}
			S.whatif = { req: req, res: r.body };
			S.mode = "whatif";
			window.weftMap.lastWhatif = S.whatif;
			whatifSummary();
			render();
			document.body.dataset.whatif = "shown";
		}, function (err) {
			$("wf-run").disabled = false;
			out.textContent = "The what-if failed: " + err;
			document.body.dataset.whatif = "error";
		});
	}

	function whatifSummary() {
		var out = $("whatif-result"), w = S.whatif.res, dl, ul;

		while (out.firstChild)
			out.removeChild(out.firstChild);
		dl = el("dl", { "class": "kv" });
		[["status", w.plan.status],
		    ["max utilisation", fmtPct(w.compare.scenario.max_utilization) +
		    " (live " + fmtPct(w.compare.live.max_utilization) + ")"],
		    ["carried", fmtRate(w.compare.scenario.carried_bps) + " (live " +
		    fmtRate(w.compare.live.carried_bps) + ")"],
		    ["unserved", fmtRate(w.compare.scenario.unserved_bps)],
		    ["traffic moved", w.compare.moved_bps >= 0 ?
		    fmtRate(w.compare.moved_bps) : "n/a"]].forEach(function (kv) {
			dl.appendChild(el("dt", {}, kv[0]));
			dl.appendChild(el("dd", {}, kv[1]));
		});
		out.appendChild(dl);
		if (w.rising_links && w.rising_links.length) {
			out.appendChild(el("h3", {}, "Largest rises"));
			ul = el("ul", { "class": "demands" });
			w.rising_links.slice(0, 5).forEach(function (x) {
				ul.appendChild(el("li", {}, x.link + " " + x.from +
				    " \u2192 " + x.to + ": " + fmtPct(x.live_utilization) +
				    " \u2192 " + fmtPct(x.utilization)));
			});
			out.appendChild(ul);
		}
		if (w.unserved_demands && w.unserved_demands.length) {
			out.appendChild(el("h3", {}, "Unserved demands (" +
			    w.unserved_demands_total + ")"));
			ul = el("ul", { "class": "demands" });
			w.unserved_demands.slice(0, 10).forEach(function (x) {
				ul.appendChild(el("li", {}, x.src + " \u2192 " + x.dst +
				    ": " + fmtRate(x.unserved_bps) +
				    (x.cut_off ? " (cut off)" : "")));
			});
			out.appendChild(ul);
		}
	}

	function backToLive() {
		S.mode = "live";
		S.whatif = null;
		S.sweep = null;
		$("whatif-result").textContent = "";
		document.body.dataset.whatif = "";
		render();
	}

	/* ---- sweeps ---- */

	function loadSweeps() {
		S.sweepsRead = Date.now();
		return api("GET", "/v1/sweeps").then(function (r) {
			var pick = $("sweep-pick"), keep = pick.value;
			if (r.status !== 200)
				return;
			while (pick.options.length > 1)
				pick.remove(1);
			r.body.sweeps.forEach(function (s) {
				var o = el("option", { value: String(s.id) }, "#" + s.id +
				    " " + s.kind + ", " + s.state + " (" + s.done + "/" +
				    s.total + ")" + (s.finished_at ? ", " + s.finished_at :
				    ""));
				o.disabled = s.state !== "done" && s.state !== "cancelled";
				pick.appendChild(o);
			});
			pick.value = keep;
			if (pick.value !== keep)
				pick.value = "";
		});
	}

	function showSweep(id) {
		var sum = $("sweep-summary"), img = $("sweep-chart");

		if (!id) {
			sum.textContent = "";
			img.hidden = true;
			$("sweep-actions").hidden = true;
			S.sweepShown = null;
			return;
		}
		api("GET", "/v1/sweeps/" + id).then(function (r) {
			var s = r.body, rep;
			if (r.status !== 200) {
				sum.textContent = errText(r);
				return;
			}
			rep = s.report;
			S.sweepShown = { id: s.id, sweep: s };
			sum.textContent = "Sweep " + s.id + ": " + s.kind + ", " +
			    s.state + ", " + s.done + " of " + s.total +
			    " scenarios in " + s.elapsed_s.toFixed(1) + " s" +
			    (rep ? "; worst maximum utilisation " +
			    (rep.worst_max_utilization ?
			    fmtPct(rep.worst_max_utilization.value) + " (scenario " +
			    rep.worst_max_utilization.index + ")" : "n/a") + "; " +
			    rep.unserved.length + " scenarios leave traffic unserved" :
			    "; no report yet") + ".";
			$("sweep-actions").hidden = !rep;
			$("sweep-links-csv").href = "/v1/sweeps/" + s.id + "/links.csv";
			$("sweep-results-csv").href = "/v1/sweeps/" + s.id +
			    "/results.csv";
			$("sweep-svg").href = "/v1/sweeps/" + s.id + "/report.svg";
			if (rep) {
				img.onload = function () {
					document.body.dataset.sweepChart = String(s.id);
				};
				if (S.token) {
					blobUrl("/v1/sweeps/" + s.id + "/report.svg")
					    .then(function (u) {
						img.src = u;
					}, function () {});
				} else {
					img.src = "/v1/sweeps/" + s.id + "/report.svg";
				}
				img.hidden = false;
			} else {
				img.hidden = true;
			}
		});
	}

	function startSweep() {
		var kind = $("sweep-kind").value;
		api("POST", "/v1/sweeps", { kind: kind }).then(function (r) {
			if (r.status !== 202) {
				$("sweep-summary").textContent = "Cannot start the sweep: " +
				    errText(r);
				return;
			}
			$("sweep-summary").textContent = "Sweep " + r.body.id +
			    " started: " + r.body.total + " scenarios.";
			loadSweeps();
		});
	}

	/* A sweep's file link: with a token, fetched with it and opened. */
	function openWithToken(ev) {
		var a = this;
		if (!S.token)
			return;
		ev.preventDefault();
		blobUrl(a.getAttribute("href")).then(function (u) {
			var t = el("a", { href: u, download: a.textContent });
			document.body.appendChild(t);
			t.click();
			document.body.removeChild(t);
			setTimeout(function () {
				URL.revokeObjectURL(u);
			}, 60000);
		}, function (err) {
			$("sweep-summary").textContent = "Cannot fetch " +
			    a.textContent + ": " + err.message;
		});
	}

	/* ---- live updates ---- */

	function setLive(how, text) {
		S.live = how;
		document.body.dataset.live = how;
		$("live-status").textContent = text;
	}

	/* An event's data as JSON, or null. */
	function eventData(ev) {
		try {
			return JSON.parse(ev.data);
		} catch (e) {
			return null;
		}
	}

	function startEvents() {
		var es;
		if (typeof EventSource === "undefined") {
			startPolling();
			return;
		}
		es = S.es = new EventSource("/v1/events");
		es.addEventListener("open", function () {
			setLive("events", "live: event stream");
			/* Whatever happened while we were not listening. */
			loadLive();
		});
		es.addEventListener("plan", function (ev) {
			var d = eventData(ev);
			setLive("events", "live: event stream");
			if (!S.plan || !d || d.revision !== S.plan.revision)
				loadLive();
		});
		es.addEventListener("model", function () {
			$("live-status").textContent = "live: event stream " +
			    "(model changed, re-solving\u2026)";
		});
		es.addEventListener("sweep", function (ev) {
			var d = eventData(ev);
			/* Progress comes up to four times a second: the list is
			   read again when a sweep starts or ends, or every 5 s. */
			if (!d || d.state !== "running" || d.done === 0 ||
			    Date.now() - S.sweepsRead > 5000)
				loadSweeps();
			if (d && S.sweepShown && d.id === S.sweepShown.id &&
			    d.state !== "running")
				showSweep(String(d.id));
		});
		es.addEventListener("error", function () {
			/* CLOSED: the daemon has no stream (a 404, say). */
			if (es.readyState === EventSource.CLOSED) {
				es.close();
				S.es = null;
				startPolling();
			} else {
				setLive("connecting", "live: reconnecting\u2026");
			}
		});
	}

	function startPolling() {
		var ticks = 0;
		if (S.pollTimer)
			return;
		setLive("polling", "live: polling every " + POLL_MS / 1000 + " s" +
		    (S.readsNeedToken ? " (the event stream takes no token)" :
		    ""));
		S.pollTimer = setInterval(function () {
			api("GET", "/v1/plan").then(function (r) {
				if (r.status === 200 && (!S.plan ||
				    r.body.revision !== S.plan.revision))
					loadLive();
			}, function () {});
			if (++ticks % 4 === 0)
				loadSweeps();
		}, POLL_MS);
	}

	/* ---- zoom and pan ---- */

	/* A pointer event's place in screen units of the drawing. */
	function mapPoint(ev) {
		var m = $("map"), r = m.getBoundingClientRect();
		return { x: (ev.clientX - r.left) * W / r.width,
		    y: (ev.clientY - r.top) * H / r.height };
	}

	/* moving: part of a drag, which ends with a setView() without. */
	function setView(v, moving) {
		S.view = v;
		S.scene.setView(v, moving);
	}

	/* Zoom by factor f about the screen point p. */
	function zoomAt(p, f) {
		var k0 = S.view.k, k = Math.min(20, Math.max(0.5, k0 * f));
		setView({ k: k, x: p.x - (p.x - S.view.x) * k / k0,
		    y: p.y - (p.y - S.view.y) * k / k0 });
	}

	/* The pointer (at p) over link id (or none): tooltip, cursor, panel.
	   Off the links, a node's mark gets its id and name as tooltip. */
	function hover(id, p) {
		var m = $("map"), r = id ? S.rowById[id] : null, n, t;
		if (!id && p && (n = S.scene.hitNode(p.x, p.y)) !== null) {
			t = S.topo ? S.topo.nodes.filter(function (x) {
				return x.id === n;
			})[0] : null;
			m.title = n + (t && t.name ? " (" + t.name + ")" : "");
		} else if (!id) {
			m.title = "";
		}
		if (id === S.hovered)
			return;
		S.hovered = id;
		if (r)
			m.title = linkTitle(r);
		m.style.cursor = id ? "pointer" : "";
		if (id && !S.selected)
			showInfo(id);
	}

	/*
	 * Pointer and keys on the map.  A pan or zoom changes only the view;
	 * the canvas draws it in its next frame, however many events came.
	 * A press on a link does not start a pan; a click on one pins it
	 * (shift-click adds it to the what-if); a drag that moved ends in no
	 * click.
	 */
	function setupZoom() {
		var m = $("map"), drag = null, moved = false;

		m.addEventListener("wheel", function (ev) {
			ev.preventDefault();
			zoomAt(mapPoint(ev), Math.exp(-ev.deltaY * 0.0015));
		}, { passive: false });
		m.addEventListener("pointerdown", function (ev) {
			var p = mapPoint(ev);
			moved = false;
			if (S.scene.hit(p.x, p.y) !== null)
				return;
			drag = { p: p, x: S.view.x, y: S.view.y };
			try {
				m.setPointerCapture(ev.pointerId);
			} catch (e) {
				/* A pointer the browser no longer knows: no capture. */
			}
		});
		m.addEventListener("pointermove", function (ev) {
			var p = mapPoint(ev);
			if (!drag) {
				hover(S.scene.hit(p.x, p.y), p);
				return;
			}
			if (Math.abs(p.x - drag.p.x) + Math.abs(p.y - drag.p.y) > 3)
				moved = true;
			setView({ k: S.view.k, x: drag.x + p.x - drag.p.x,
			    y: drag.y + p.y - drag.p.y }, true);
		});
		function endDrag() {
			if (!drag)
				return;
			drag = null;
			setView(S.view);
		}
		m.addEventListener("pointerup", endDrag);
		m.addEventListener("pointercancel", endDrag);
		m.addEventListener("pointerleave", function () {
			if (!drag)
				hover(null);
		});
		m.addEventListener("click", function (ev) {
			var p = mapPoint(ev), id;
			if (moved)
				return;
			id = S.scene.hit(p.x, p.y);
			if (id === null)
				return;
			if (ev.shiftKey) {
				toggleFail(id);
				return;
			}
			select(S.selected === id ? null : id);
		});
		m.addEventListener("dblclick", function () {
			setView({ k: 1, x: 0, y: 0 });
		});
		/* Arrow keys pan, + and - zoom about the middle, 0 resets. */
		m.addEventListener("keydown", function (ev) {
			var d = { ArrowLeft: [1, 0], ArrowRight: [-1, 0],
			    ArrowUp: [0, 1], ArrowDown: [0, -1] }[ev.key];
			if (d) {
				setView({ k: S.view.k, x: S.view.x + d[0] * PAN_STEP,
				    y: S.view.y + d[1] * PAN_STEP });
			} else if (ev.key === "+" || ev.key === "=") {
				zoomAt({ x: W / 2, y: H / 2 }, 1.25);
			} else if (ev.key === "-") {
				zoomAt({ x: W / 2, y: H / 2 }, 0.8);
			} else if (ev.key === "0") {
				setView({ k: 1, x: 0, y: 0 });
			} else {
				return;
			}
			ev.preventDefault();
		});
	}

	/* ---- start ---- */

	function start() {
		Array.prototype.forEach.call($("links-table").tHead.rows[0].cells,
		    function (th) {
			th.addEventListener("click", function () {
				if (S.sortKey === th.dataset.key) {
					S.sortAsc = !S.sortAsc;
				} else {
					S.sortKey = th.dataset.key;
					S.sortAsc = th.dataset.type === "str";
				}
				if (S.loads)
					drawTable(S.rows);
			});
		});
		$("whatif-form").addEventListener("submit", runWhatif);
		$("token-form").addEventListener("submit", useToken);
		["sweep-links-csv", "sweep-results-csv", "sweep-svg"].forEach(
		    function (id) {
			$(id).addEventListener("click", openWithToken);
		});
		$("wf-clear").addEventListener("click", function () {
			$("wf-links").selectedIndex = -1;
			$("wf-nodes").selectedIndex = -1;
			$("wf-scale").value = "1";
		});
		$("back-live").addEventListener("click", backToLive);
		$("sweep-pick").addEventListener("change", function () {
			showSweep(this.value);
		});
		$("sweep-refresh").addEventListener("click", loadSweeps);
		$("sweep-start").addEventListener("click", startSweep);
		$("sweep-onmap").addEventListener("click", function () {
			if (!S.sweepShown || !S.sweepShown.sweep.report)
				return;
			S.sweep = S.sweepShown;
			S.mode = "sweep";
			render();
		});
		S.scene = weftCanvas.create($("map"));
		window.weftMap.drawn = S.scene.drawn;
		window.weftMap.hit = S.scene.hit;
		setupZoom();
		loadToken();
		loadLive();
		loadSweeps();
		startEvents();
	}

	start();
})();
