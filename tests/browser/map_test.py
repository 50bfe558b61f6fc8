#!/usr/bin/python3
# SPDX-License-Identifier: GPL-3.0-or-later
"""The network map page in a real browser, and the sweep report chart.

Run from the repository root with /usr/bin/python3 (make check-browser).  It
starts its own weftd on 127.0.0.1 (tests/lib/weftd.py), loads the SNDlib
instance germany50 (public data with coordinates, tests/data/PROVENANCE.md),
a fifth of its demands so that the plan fits, under a balance policy with
one link down, and drives Debian's chromium headless through chromium-driver
and python3-selenium.

The map is a canvas: the page reports what its last frame drew
(window.weftMap.drawn(): every direction with its colour, the crosses, the
badges, the nodes), and the canvas's pixels show what was painted.

What the checks compare with, outside the page's own code:
- colours: the scale's stops as docs/api.md ("Web page") documents them,
  interpolated here by this file's own code (expected_rgb), against the
  colour the page drew each stroke with, and against the canvas's pixels
  at the middle of every stroke no other mark covers
  (CanvasRenderingContext2D.getImageData; at least PIXELS_LEAST of them,
  since crossing strokes may cover a middle);
- loads, utilisations and demands: the daemon's JSON (GET /v1/plan/loads,
  /v1/plan/routes, POST /v1/whatif, GET /v1/sweeps/{id}) read over HTTP by
  this test;
- table order: Python's sorted() on the same numbers;
- report.svg: parsed with xml.etree (the XML 1.0 parser of the standard
  library) and checked against the report JSON and the chart's own axis
  ticks, as a reader of the chart would measure it.
- a continental network (test_kdl_map): the Kdl topology with the seeded
  traffic of tests/bench/synth.py in a daemon of its own: every node and
  link direction drawn, a pan by real mouse input moves every node by the
  drag, the keyboard pans, a link taken down recolours the map to the new
  GET /v1/plan/loads.  Its timings (first drawing, pan frames, recolour,
  long tasks from PerformanceObserver) go to build/artifacts/kdl-timings.json
  and are printed, never asserted.
Screenshots (PNG) go to build/artifacts/.  Every wait is bounded and the
whole run is bounded by TOTAL_S.  Case names as arguments run only those
cases (map_test.py live_map kdl_map).
"""
import base64
import functools
import http.client
import math
import os
import re
import shutil
import signal
import struct
import sys
import tempfile
import time
import traceback
import xml.etree.ElementTree as ET
import zlib

ROOT = os.path.dirname(os.path.dirname(os.path.dirname(os.path.abspath(__file__))))
sys.path.insert(0, os.path.join(ROOT, "tests", "lib"))
from weftd import Daemon  # noqa: E402

TOTAL_S = 900                   # the whole run
WAIT_S = 60                     # one wait for the page
ARTIFACTS = os.path.join(ROOT, "build", "artifacts")
CHROMIUM = "/usr/bin/chromium"
CHROMEDRIVER = "/usr/bin/chromedriver"
SVGNS = "{http://www.w3.org/2000/svg}"
INSTANCE = os.path.join(ROOT, "tests", "data", "sndlib", "germany50.txt")
HEADROOM = 0.9
DEMAND_SCALE = 0.2              # a fifth of the demands: the plan fits
WHATIF_SCALE = 2                # and a what-if where it does not
PIXELS_LEAST = 0.5              # stroke middles that must show their colour
STROKE_LEAST = 60               # of strokes this long at least (screen units)

# ---------------------------------------------------------------------------
# The utilisation scale, from the stops documented in docs/api.md: sRGB
# channels interpolated linearly between stops, rounded half up; clamped
# below 0 and above 1.  Written here independently of api/web/scale.js.
# ---------------------------------------------------------------------------
STOPS = [(0.0, "00256e"), (0.2, "004992"), (0.4, "4d729e"),
         (0.6, "9a9895"), (0.8, "e0c079"), (1.0, "fff175")]
DOWN_RGB = (0x8c, 0x8c, 0x8c)   # a failed link direction


def hex_rgb(h):
    return tuple(int(h[i:i + 2], 16) for i in (0, 2, 4))


def expected_rgb(u):
    if u <= STOPS[0][0]:
        return hex_rgb(STOPS[0][1])
    if u >= STOPS[-1][0]:
        return hex_rgb(STOPS[-1][1])
    for (u0, h0), (u1, h1) in zip(STOPS, STOPS[1:]):
        if u <= u1:
            f = (u - u0) / (u1 - u0)
            return tuple(int(math.floor(c0 + (c1 - c0) * f + 0.5))
                         for c0, c1 in zip(hex_rgb(h0), hex_rgb(h1)))
    raise AssertionError("unreachable")


def parse_css_rgb(s):
    if re.fullmatch(r"#[0-9a-fA-F]{6}", s.strip()):
        return hex_rgb(s.strip()[1:])
    m = re.fullmatch(r"rgb\((\d+), (\d+), (\d+)\)", s.strip())
    if not m:
        raise AssertionError("not an rgb() colour: %r" % s)
    return tuple(int(x) for x in m.groups())


class Fail(Exception):
    pass


def check(cond, msg):
    if not cond:
        raise Fail(msg)


# ---------------------------------------------------------------------------
# The run: one daemon, one browser, cases in order (later ones build on the
# state earlier ones leave).
# ---------------------------------------------------------------------------
D = None
B = None
CTX = {}


def wait_for(what, fn, timeout=WAIT_S, every=0.1):
    end = time.time() + timeout
    last = None
    while time.time() < end:
        last = fn()
        if last:
            return last
        time.sleep(every)
    raise Fail("timed out after %.0f s waiting for %s (last: %r)" % (timeout, what, last))


def js(script, *args):
    return B.execute_script(script, *args)


def page_state():
    return js("return [document.body.dataset.state, document.body.dataset.revision,"
              " document.body.dataset.mode, document.body.dataset.live]")


def settled():
    """Waits until the map has drawn what the page last gave it: the page
    asks for one animation frame per change, so two frames suffice."""
    B.execute_async_script("var done = arguments[arguments.length - 1];"
                           "requestAnimationFrame(() => requestAnimationFrame(() => done(1)));")


def drawn():
    """What the map's last frame drew, as the page reports it
    (window.weftMap.drawn(), api/web/canvas.js)."""
    settled()
    d = js("return window.weftMap.drawn();")
    check(d is not None, "the map has drawn no frame")
    return d


def drawn_dirs():
    """Every direction stroke on the map: (link, dir) -> (rgb, classes, util)."""
    out = {}
    for link, d, colour, util, down, over in (x[:6] for x in drawn()["dirs"]):
        check((link, d) not in out, "direction %s %s drawn twice" % (link, d))
        cls = ["dir"] + (["down"] if down else []) + (["over"] if over else [])
        out[(link, d)] = (parse_css_rgb(colour), cls, util)
    return out


def over_marks():
    return set(tuple(x) for x in drawn()["over"])


def crosses():
    return set(drawn()["crosses"])


def stroke_pixels(dirs):
    """The colour the canvas holds at the middle of each direction's stroke
    (CanvasRenderingContext2D.getImageData): (link, dir) -> (r, g, b)."""
    pts = js("""var c = document.getElementById('map'), g = c.getContext('2d'),
        s = c.width / window.weftMap.drawn().width, out = [];
        for (const d of arguments[0]) {
            const p = g.getImageData(Math.floor(d[6] * s), Math.floor(d[7] * s), 1, 1).data;
            out.push([d[0], d[1], p[0], p[1], p[2]]);
        }
        return out;""", dirs)
    return {(l, d): (r, g, b) for l, d, r, g, b in pts}


def check_pixels(what, want_rgb, least):
    """At least the fraction least of the directions drawn (where other
    marks may cover a stroke's middle: crossings, badges, nodes) must show,
    in the canvas's pixels, the colour the scale gives (each channel within
    1 of it, for the resampling of a scaled drawing)."""
    d = drawn()
    r = d["node_r"] + 2
    # Only stroke middles that no label or node mark covers (as the page
    # reports where it put them), on strokes long enough that their own
    # arrow (at 0.58 of the way) and "!" badge (at 0.38) leave the middle.
    dirs = [x for x in d["dirs"] if x[8] >= STROKE_LEAST
            and not any(b[1] <= x[6] <= b[3] and b[2] <= x[7] <= b[4] for b in d["labels"])
            and not any(abs(n[1] - x[6]) <= r and abs(n[2] - x[7]) <= r for n in d["nodes"])]
    px = stroke_pixels(dirs)
    good = [k for k, rgb in px.items()
            if all(abs(a - b) <= 1 for a, b in zip(rgb, want_rgb[k]))]
    frac = len(good) / max(1, len(px))
    check(frac >= least, "%s: only %d of %d stroke middles show the scale's colour (%s)"
          % (what, len(good), len(px), sorted((k, px[k], want_rgb[k]) for k in px
                                              if k not in set(good))[:3]))
    return frac


def check_map(links, utils, down, headroom, what):
    """links: [(id, state)]; utils: (id, dir) -> utilisation; down: ids
    drawn as failed.  Compares every stroke with the documented scale."""
    drawn = drawn_dirs()
    want = set((lid, d) for lid, _ in links for d in ("a_to_b", "b_to_a"))
    check(set(drawn) == want, "%s: directions drawn %d, expected %d; missing %s, extra %s"
          % (what, len(drawn), len(want), sorted(want - set(drawn))[:5],
             sorted(set(drawn) - want)[:5]))
    bad = []
    over = set()
    for (lid, d), (rgb, cls, _) in sorted(drawn.items()):
        if lid in down:
            exp = DOWN_RGB
            if "down" not in cls:
                bad.append("%s %s not marked down" % (lid, d))
        else:
            u = utils[(lid, d)]
            exp = expected_rgb(u)
            if u > 0 and u >= headroom * (1 - 1e-9):
                over.add((lid, d))
        if rgb != exp:
            bad.append("%s %s: colour %s, the scale gives %s for %r"
                       % (lid, d, rgb, exp, utils.get((lid, d))))
    check(not bad, "%s: %d strokes wrong: %s" % (what, len(bad), "; ".join(bad[:5])))
    want_rgb = {k: (DOWN_RGB if k[0] in down else expected_rgb(utils[k])) for k in drawn}
    frac = check_pixels(what, want_rgb, PIXELS_LEAST)
    print("# %s: %.0f %% of the uncovered stroke middles show the scale's colour" % (what, 100 * frac))
    check(crosses() == set(down), "%s: crosses on %s, expected on %s"
          % (what, sorted(crosses()), sorted(down)))
    marks = over_marks()
    check(marks == over, "%s: at-headroom marks on %d directions, expected %d (%s)"
          % (what, len(marks), len(over), sorted(marks ^ over)[:5]))
    return len(drawn), len(over)


def loads_utils(loads):
    u = {}
    for l in loads["links"]:
        u[(l["id"], "a_to_b")] = l["a_to_b"]["utilization"]
        u[(l["id"], "b_to_a")] = l["b_to_a"]["utilization"]
    return u


def png_ok(path):
    """A real PNG of sensible size whose pixels are not all alike."""
    check(os.path.exists(path), "%s was not written" % path)
    data = open(path, "rb").read()
    check(data[:8] == b"\x89PNG\r\n\x1a\n", "%s is not a PNG" % path)
    w, h = struct.unpack(">II", data[16:24])
    check(w >= 400 and h >= 300, "%s is only %dx%d" % (path, w, h))
    # Concatenate the IDAT chunks (PNG, RFC 2083) and inflate them.
    pos, idat = 8, b""
    while pos < len(data):
        n, kind = struct.unpack(">I4s", data[pos:pos + 8])
        if kind == b"IDAT":
            idat += data[pos + 8:pos + 8 + n]
        pos += 12 + n
    raw = zlib.decompress(idat)
    check(len(set(raw)) > 32, "%s looks blank (%d distinct bytes)" % (path, len(set(raw))))
    return w, h, len(data)


def screenshot(name, selector="body"):
    """A PNG of the element selector, whole even where it is taller than
    the window (Chrome DevTools Protocol, Page.captureScreenshot)."""
    os.makedirs(ARTIFACTS, exist_ok=True)
    path = os.path.join(ARTIFACTS, name)
    js("window.scrollTo(0, 0);")
    r = js("var r = document.querySelector(arguments[0]).getBoundingClientRect();"
           "return [r.left + scrollX, r.top + scrollY, r.width, r.height];", selector)
    shot = B.execute_cdp_cmd("Page.captureScreenshot", {
        "format": "png", "captureBeyondViewport": True,
        "clip": {"x": r[0], "y": r[1], "width": r[2], "height": min(r[3], 6000), "scale": 1}})
    with open(path, "wb") as f:
        f.write(base64.b64decode(shot["data"]))
    return path


def open_page():
    B.get(D.base + "/")
    wait_for("the page to show a plan", lambda: page_state()[0] == "ready")


def wait_page_revision(rev, timeout=WAIT_S):
    """Until the page shows plan rev on the map and in the table (which
    follows the map by a task: body[data-table] is "REV MODE")."""
    wait_for("the page to show plan %d" % rev,
             lambda: page_state()[1] == str(rev) and page_state()[0] == "ready"
             and js("return document.body.dataset.table") == "%d %s" % (rev, page_state()[2]),
             timeout=timeout)


# ---- cases ----

def test_page_files():
    r = D.get("/")
    check(r.status == 200, "GET / is %d" % r.status)
    check(r.headers.get("Content-Type", "").startswith("text/html"),
          "GET / Content-Type %r" % r.headers.get("Content-Type"))
    check(b'<canvas id="map"' in r.body, "GET / is not the map page")
    for name, ctype in (("index.html", "text/html"), ("map.js", "text/javascript"),
                        ("scale.js", "text/javascript"), ("layout.js", "text/javascript"),
                        ("canvas.js", "text/javascript"), ("style.css", "text/css")):
        r = D.get("/ui/" + name)
        check(r.status == 200, "GET /ui/%s is %d" % (name, r.status))
        check(r.headers.get("Content-Type", "").startswith(ctype),
              "/ui/%s Content-Type %r" % (name, r.headers.get("Content-Type")))
        check(len(r.body) > 100, "/ui/%s is nearly empty" % name)
    r = D.get("/ui/nothing.js")
    check(r.status == 404 and r.json()["error"]["code"] == "not_found",
          "an unknown page file gives %r" % r)
    r = D.request("POST", "/ui/map.js", "x", ctype="text/plain")
    check(r.status == 405, "POST /ui/map.js gives %d" % r.status)
    # The page fetches nothing from elsewhere: every URL it names is ours.
    for name in ("index.html", "map.js", "scale.js", "layout.js", "canvas.js", "style.css"):
        text = D.get("/ui/" + name).body.decode()
        ext = [u for u in re.findall(r"(?:https?:)?//[^\s\"')]+", text)
               if "www.w3.org/2000/svg" not in u]
        check(not ext, "/ui/%s names outside URLs: %s" % (name, ext[:3]))


def test_live_map():
    open_page()
    loads = D.get("/v1/plan/loads").json()
    CTX["live_loads"] = loads
    check({l["id"] for l in loads["links"] if l["state"] != "up"} == CTX["down"],
          "the loads do not show %s down" % CTX["down"])
    wait_page_revision(loads["revision"])
    n, over = check_map([(l["id"], l["state"]) for l in loads["links"]], loads_utils(loads),
                        CTX["down"], HEADROOM, "live map")
    CTX["live_loads"] = loads
    # The page says what a plan is (as the README does).
    caution = B.find_element("id", "caution")
    check(caution.is_displayed() and "engineering advice" in caution.text
          and "regulations" in caution.text, "no caution on the page: %r" % caution.text)
    png_ok(screenshot("map-live.png", "#page-top"))
    print("# %d directions drawn, %d at the headroom, 1 link down; live via %s"
          % (n, over, page_state()[3]))


def nat_cmp(a, b):
    """Natural order as docs/api.md states it for the table: runs of digits
    compare as numbers, other runs as text, then fewer runs first, then the
    whole strings.  (This file's own implementation of that rule.)"""
    ra, rb = re.findall(r"[0-9]+|[^0-9]+", a), re.findall(r"[0-9]+|[^0-9]+", b)
    for x, y in zip(ra, rb):
        if x[0] in "0123456789" and y[0] in "0123456789":
            if int(x) != int(y):
                return -1 if int(x) < int(y) else 1
            x, y = str(int(x)), str(int(y))
        if x != y:
            return -1 if x < y else 1
    if len(ra) != len(rb):
        return -1 if len(ra) < len(rb) else 1
    return (a > b) - (a < b)


NAT = functools.cmp_to_key(nat_cmp)


def table_order():
    return js("return Array.from(document.querySelectorAll('#links-table tbody tr'))"
              ".map(r => r.dataset.link);")


def click_header(key):
    B.find_element("css selector", '#links-table th[data-key="%s"]' % key).click()


def test_table_sorts():
    loads = CTX["live_loads"]
    ids = [l["id"] for l in loads["links"]]
    order = table_order()
    check(sorted(order) == sorted(ids) and len(order) == len(ids),
          "the table has %d rows for %d links" % (len(order), len(ids)))
    maxu = {l["id"]: max(l["a_to_b"]["utilization"], l["b_to_a"]["utilization"])
            for l in loads["links"]}
    click_header("max_util")
    want = sorted(ids, key=lambda i: (-maxu[i], NAT(i)))
    check(table_order() == want, "sorted by max utilisation (descending): %s..., expected %s..."
          % (table_order()[:5], want[:5]))
    th = B.find_element("css selector", '#links-table th[data-key="max_util"]')
    check(th.get_attribute("aria-sort") == "descending", "aria-sort %r" % th.get_attribute("aria-sort"))
    click_header("max_util")
    want = sorted(ids, key=lambda i: (maxu[i], NAT(i)))
    check(table_order() == want, "sorted by max utilisation (ascending)")
    cap = {l["id"]: l["capacity_bps"] for l in loads["links"]}
    click_header("capacity")
    check(table_order() == sorted(ids, key=lambda i: (-cap[i], NAT(i))), "sorted by capacity")
    click_header("id")
    check(table_order() == sorted(ids, key=NAT), "sorted by link id: %s" % table_order()[:12])
    check(table_order().index("L2") < table_order().index("L10"), "L10 before L2")
    click_header("id")
    check(table_order() == sorted(ids, key=NAT, reverse=True), "sorted by link id, reversed")
    names = {l["id"]: l["a"] for l in loads["links"]}
    click_header("a")
    check(table_order() == sorted(ids, key=lambda i: (NAT(names[i]), NAT(i))), "sorted by node A")
    click_header("id")


def client_point(x, y):
    """The viewport point (CSS px) of the drawing's screen point (x, y)."""
    r = js("var r = document.getElementById('map').getBoundingClientRect();"
           "return [r.left, r.top, r.width];")
    f = r[2] / drawn()["width"]
    return r[0] + x * f, r[1] + y * f


def mouse(kind, x, y, buttons=0, button="none", clicks=0):
    """A real mouse event at the viewport point (x, y) (Chrome DevTools
    Protocol, Input.dispatchMouseEvent): the browser hit-tests and fires
    pointer, mouse and click events as for a person's mouse."""
    B.execute_cdp_cmd("Input.dispatchMouseEvent", {"type": kind, "x": x, "y": y, "button": button,
                                                   "buttons": buttons, "clickCount": clicks})


def click_link(lid):
    """A click at the middle of link lid's axis, where the map drew it:
    halfway between its two directions' middles."""
    js("document.getElementById('map').scrollIntoView({block: 'center'});")
    ms = [(d[6], d[7]) for d in drawn()["dirs"] if d[0] == lid]
    check(len(ms) == 2, "link %s is drawn with %d directions" % (lid, len(ms)))
    x, y = client_point((ms[0][0] + ms[1][0]) / 2, (ms[0][1] + ms[1][1]) / 2)
    mouse("mouseMoved", x, y)
    mouse("mousePressed", x, y, buttons=1, button="left", clicks=1)
    mouse("mouseReleased", x, y, button="left", clicks=1)


def test_link_details():
    loads = CTX["live_loads"]
    routes = D.get("/v1/plan/routes").json()
    check(routes["revision"] == loads["revision"], "the plan moved during the test")
    # The busiest up link: the demands crossing it come from the routes.
    up = [l for l in loads["links"] if l["state"] == "up"]
    l = max(up, key=lambda x: (x["a_to_b"]["load_bps"] + x["b_to_a"]["load_bps"], x["id"]))
    count = {"a_to_b": set(), "b_to_a": set()}
    for i, r in enumerate(routes["routes"]):
        for p in r["paths"]:
            for k, lid in enumerate(p["links"]):
                if lid == l["id"]:
                    count["a_to_b" if p["nodes"][k] == l["a"] else "b_to_a"].add(i)
    click_link(l["id"])
    wait_for("the link panel", lambda: js(
        "return document.getElementById('info-body').dataset.link") == l["id"])
    # The demands come with the routes, read when the panel first needs them,
    # and only those crossing the link (?link=ID): a page showing a full
    # matrix never reads all of its routes.
    wait_for("the demands in the panel", lambda: js(
        "return document.querySelectorAll('#info-body [data-dir][data-count]').length") == 2)
    asked = js("return performance.getEntriesByType('resource').map(e => e.name)"
               ".filter(n => n.indexOf('/v1/plan/routes') >= 0);")
    check(asked and all("link=" in u for u in asked),
          "the page read routes without the link filter: %r" % asked)
    text = B.find_element("id", "info-body").text
    check(l["id"] in text and l["a"] in text and l["b"] in text, "the panel lacks the link: %r" % text[:200])
    for d in ("a_to_b", "b_to_a"):
        shown = js("var e = document.querySelector('#info-body [data-dir=\"' + arguments[0] + '\"]');"
                   "return e ? Number(e.dataset.count) : -1;", d)
        check(shown == len(count[d]), "%s %s: the panel counts %d demands, the routes %d"
              % (l["id"], d, shown, len(count[d])))
        pct = "%.1f %%" % (100 * l[d]["utilization"])
        check(pct in text, "the panel lacks the utilisation %s" % pct)
    check(sum(len(v) for v in count.values()) > 0, "the busiest link carries no demand")
    row = js("return document.querySelector('#links-table tr.selected').dataset.link;")
    check(row == l["id"], "the table highlights %r" % row)
    check("(pinned)" in B.find_element("id", "info-body").text, "the link is not pinned")
    tip = js("return document.getElementById('map').title;")
    check(tip.startswith(l["id"] + ": ") and ("%.1f %%" % (100 * l["a_to_b"]["utilization"])) in tip,
          "the map's tooltip over %s is %r" % (l["id"], tip))
    # Click again to unpin.
    click_link(l["id"])
    wait_for("the link unpinned", lambda: "(pinned)" not in B.find_element("id", "info-body").text)


def test_whatif():
    loads = CTX["live_loads"]
    up = [l for l in loads["links"] if l["state"] == "up"]
    victim = max(up, key=lambda x: (x["a_to_b"]["load_bps"] + x["b_to_a"]["load_bps"], x["id"]))["id"]
    sel = B.find_element("id", "wf-links")
    js("for (const o of arguments[0].options) o.selected = (o.value === arguments[1]);", sel, victim)
    B.find_element("id", "wf-scale").clear()
    B.find_element("id", "wf-scale").send_keys(str(WHATIF_SCALE))
    B.find_element("id", "wf-run").click()
    wait_for("the what-if answer", lambda: js("return document.body.dataset.whatif") in ("shown", "error"),
             timeout=180)
    check(js("return document.body.dataset.whatif") == "shown",
          "the what-if failed: %s" % B.find_element("id", "whatif-result").text)
    banner = B.find_element("id", "mode-banner")
    check(banner.is_displayed() and "What-if" in banner.text, "no what-if banner: %r" % banner.text)
    check(page_state()[2] == "whatif", "mode %r" % page_state()[2])
    page = js("return window.weftMap.lastWhatif;")
    check(page["req"] == {"fail": {"links": [victim]}, "scale": WHATIF_SCALE},
          "the page sent %r" % page["req"])
    # The same scenario through the API, by this test.
    mine = D.request("POST", "/v1/whatif", page["req"], timeout=180)
    check(mine.status == 200, "POST /v1/whatif: %r" % mine)
    mine = mine.json()
    check(mine["scenario"]["failed_links"] == [victim], "failed %r" % mine["scenario"]["failed_links"])
    theirs = {w["link"]: w for w in page["res"]["links"]}
    utils = {}
    for w in mine["links"]:
        for d in ("a_to_b", "b_to_a"):
            a, b = w[d]["utilization"], theirs[w["link"]][d]["utilization"]
            check(abs(a - b) <= 1e-6, "what-if %s %s: page %r, API %r" % (w["link"], d, b, a))
            utils[(w["link"], d)] = b
    down = set(CTX["down"]) | {victim}
    n, over = check_map([(l["id"], l["state"]) for l in loads["links"]], utils, down, HEADROOM,
                        "what-if map")
    rising = mine["rising_links"]
    check(rising and rising[0]["rise"] > 0, "failing the busiest link raises nothing")
    # Traffic left unserved between two ends a path still joins means a
    # saturated cut between them (max-flow min-cut): full directions to mark.
    check(any(not x["cut_off"] for x in mine["unserved_demands"]),
          "the what-if was meant to overload the network (status %s)" % mine["plan"]["status"])
    check(over > 0, "the what-if leaves traffic unserved, but no direction is marked full")
    png_ok(screenshot("map-whatif.png", "#page-top"))
    B.find_element("id", "back-live").click()
    wait_for("the live plan again", lambda: page_state()[2] == "live")
    check(not banner.is_displayed(), "the banner stays after going back")
    cur = D.get("/v1/plan/loads").json()
    wait_page_revision(cur["revision"])
    check_map([(l["id"], l["state"]) for l in cur["links"]], loads_utils(cur), CTX["down"],
              HEADROOM, "live map after the what-if")
    print("# what-if without %s: %d directions, %d at the headroom" % (victim, n, over))


def events_served():
    """The status of GET /v1/events, read from the headers alone (a stream
    never ends by itself)."""
    c = http.client.HTTPConnection(D.base.split("//", 1)[1], timeout=10)
    try:
        c.request("GET", "/v1/events")
        return c.getresponse().status
    finally:
        c.close()


def follow_new_plan(how):
    before = D.get("/v1/plan").json()["revision"]
    l = CTX["live_loads"]["links"][5]
    r = D.request("PATCH", "/v1/links/" + l["id"], {"capacity_bps": l["capacity_bps"] * 1.5})
    check(r.status == 200, "PATCH: %r" % r)
    plan = D.wait_plan(r.json()["model_revision"], verify=False)
    check(plan["revision"] > before, "no new plan")
    wait_page_revision(plan["revision"])
    loads = D.get("/v1/plan/loads").json()
    if loads["revision"] == plan["revision"]:
        check_map([(x["id"], x["state"]) for x in loads["links"]], loads_utils(loads), CTX["down"],
                  HEADROOM, "map after a new plan")
    CTX["live_loads"] = loads
    check(page_state()[3] == how, "the page says it follows %r, expected %r" % (page_state()[3], how))
    print("# the page followed plan %d -> %d via %s" % (before, plan["revision"], how))


def test_live_update():
    """A write makes a new plan; the page follows by itself: through the
    event stream where the daemon serves one, else by polling."""
    status = events_served()
    check(status in (200, 404), "GET /v1/events answers %d" % status)
    follow_new_plan("events" if status == 200 else "polling")


def test_live_polling():
    """Where the event stream is missing (here: the page's EventSource is
    pointed at a path that answers 404), the page polls instead."""
    hook = B.execute_cdp_cmd("Page.addScriptToEvaluateOnNewDocument", {"source": """
        (function () {
            var Real = window.EventSource;
            window.EventSource = function () { return new Real('/v1/no-such-stream'); };
            window.EventSource.CLOSED = Real.CLOSED;
        })();"""})
    try:
        open_page()
        wait_for("the page to fall back to polling", lambda: page_state()[3] == "polling")
        follow_new_plan("polling")
    finally:
        B.execute_cdp_cmd("Page.removeScriptToEvaluateOnNewDocument",
                          {"identifier": hook["identifier"]})
    open_page()


def wait_sweep(sid, timeout=600):
    def done():
        s = D.get("/v1/sweeps/%d" % sid).json()
        return s if s["state"] != "running" else None
    return wait_for("sweep %d" % sid, done, timeout=timeout, every=0.5)


def test_sweep_view():
    r = D.request("POST", "/v1/sweeps", {"kind": "links"})
    check(r.status == 202, "POST /v1/sweeps: %r" % r)
    sid = r.json()["id"]
    s = wait_sweep(sid)
    check(s["state"] == "done" and s["report"] is not None, "sweep %d ended %s" % (sid, s["state"]))
    CTX["sweep"] = s
    B.find_element("id", "sweep-refresh").click()
    wait_for("the sweep in the list", lambda: js(
        "return Array.from(document.getElementById('sweep-pick').options)"
        ".some(o => o.value === arguments[0] && !o.disabled);", str(sid)))
    js("var p = document.getElementById('sweep-pick'); p.value = arguments[0];"
       "p.dispatchEvent(new Event('change'));", str(sid))
    wait_for("the chart to load", lambda: js("return document.body.dataset.sweepChart") == str(sid))
    size = js("var i = document.getElementById('sweep-chart');"
              "return [i.naturalWidth, i.naturalHeight, i.complete];")
    check(size[0] == 960 and size[1] > 200 and size[2], "the chart image is %r" % size)
    B.find_element("id", "sweep-onmap").click()
    wait_for("the worst-case map", lambda: page_state()[2] == "sweep")
    loads = CTX["live_loads"]
    worst = {}
    for x in s["report"]["links"]:
        for l in loads["links"]:
            if l["id"] == x["link"]:
                worst[(l["id"], "a_to_b" if x["from"] == l["a"] else "b_to_a")] = x["worst_utilization"]
    utils = {(l["id"], d): worst.get((l["id"], d), 0) for l in loads["links"]
             for d in ("a_to_b", "b_to_a")}
    check_map([(l["id"], l["state"]) for l in loads["links"]], utils, CTX["down"],
              s["report"]["headroom"], "sweep worst-case map")
    png_ok(screenshot("map-sweep.png", "#page-top"))
    png_ok(screenshot("sweep-chart.png", "#sweeps-section"))
    B.find_element("id", "back-live").click()
    wait_for("the live plan again", lambda: page_state()[2] == "live")


def chart(sid):
    r = D.get("/v1/sweeps/%d/report.svg" % sid)
    check(r.status == 200, "report.svg: %r" % r)
    check(r.headers.get("Content-Type", "").startswith("image/svg+xml"),
          "report.svg Content-Type %r" % r.headers.get("Content-Type"))
    root = ET.fromstring(r.body)
    check(root.tag == SVGNS + "svg", "the root element is %r" % root.tag)
    return root, r.body


def classes(e):
    return (e.get("class") or "").split()


def check_chart(root, sweep):
    rep = sweep["report"]
    bars = [e for e in root.iter(SVGNS + "rect") if "bar" in classes(e)]
    check(len(bars) == len(rep["links"]), "%d bars for %d report links" % (len(bars), len(rep["links"])))
    # The axis as a reader measures it: the ticks labelled 0 % and 100 %.
    ticks = {}
    for t in root.iter(SVGNS + "text"):
        if "tick-label" in classes(t):
            ticks[t.text.strip()] = float(t.get("x"))
    check("0 %" in ticks and "100 %" in ticks, "no 0 %% / 100 %% ticks: %s" % sorted(ticks))
    x0, x1 = ticks["0 %"], ticks["100 %"]
    line = [e for e in root.iter(SVGNS + "line") if "headroom" in classes(e)]
    check(len(line) == 1, "%d headroom lines" % len(line))
    hx = float(line[0].get("x1"))
    check(abs(hx - (x0 + (x1 - x0) * rep["headroom"])) <= 0.02 and line[0].get("x2") == line[0].get("x1"),
          "the headroom line is at x=%g, the axis puts %g at %g"
          % (hx, rep["headroom"], x0 + (x1 - x0) * rep["headroom"]))
    # Bars: worst first, each as long as its utilisation on that axis.
    rows = [g for g in root.iter(SVGNS + "g") if "row" in classes(g)]
    check(len(rows) == len(bars), "rows and bars differ")
    got = sorted((g.get("data-link"), g.get("data-from"), g.get("data-to")) for g in rows)
    want = sorted((x["link"], x["from"], x["to"]) for x in rep["links"])
    check(got == want, "the bars name other directions than the report: %s vs %s" % (got[:3], want[:3]))
    byd = {(x["link"], x["from"], x["to"]): x["worst_utilization"] for x in rep["links"]}
    prev = None
    for g in rows:
        u = byd[(g.get("data-link"), g.get("data-from"), g.get("data-to"))]
        bar = [e for e in g.iter(SVGNS + "rect") if "bar" in classes(e)][0]
        check(abs(float(bar.get("x")) - x0) <= 0.02, "a bar starts at %s, not at 0 %%" % bar.get("x"))
        check(abs(float(bar.get("width")) - (x1 - x0) * u) <= 0.02,
              "bar %s: width %s for utilisation %r" % (g.get("data-link"), bar.get("width"), u))
        check(("over" in classes(bar)) == (u > rep["headroom"] + 1e-9), "bar %s over-headroom class" %
              g.get("data-link"))
        check(prev is None or u <= prev, "bars are not sorted worst first")
        prev = u
    titles = [t for t in root.iter(SVGNS + "text") if "title" in classes(t)]
    check(titles and "Sweep %d" % sweep["id"] in "".join(titles[0].itertext()), "no chart title")
    axis = [t for t in root.iter(SVGNS + "text") if "axis-title" in classes(t)]
    check(len(axis) == 2, "%d axis titles" % len(axis))


def test_report_svg():
    s = CTX["sweep"]
    root, _ = chart(s["id"])
    check_chart(root, s)
    for bad in ("999999", "abc", "0"):
        r = D.get("/v1/sweeps/%s/report.svg" % bad)
        check(r.status == 404 and r.json()["error"]["code"] == "not_found",
              "report.svg of sweep %s: %r" % (bad, r))
    # A sweep that is running has no report yet: link pairs of germany50
    # are thousands of scenarios, so it is still running right after the POST.
    r = D.request("POST", "/v1/sweeps", {"kind": "link-pairs"})
    check(r.status == 202, "POST link-pairs: %r" % r)
    sid = r.json()["id"]
    svg = D.get("/v1/sweeps/%d/report.svg" % sid)
    state = D.get("/v1/sweeps/%d" % sid).json()["state"]
    c = D.request("POST", "/v1/sweeps/%d/cancel" % sid, timeout=120)
    check(c.status == 200, "cancel: %r" % c)
    check(state == "running", "the link-pairs sweep was already %s" % state)
    check(svg.status == 404 and svg.json()["error"]["code"] == "not_found",
          "report.svg of a running sweep: %r" % svg)
    cancelled = D.get("/v1/sweeps/%d" % sid).json()
    check(cancelled["state"] == "cancelled" and cancelled["report"] is not None, "cancelled: %s"
          % cancelled["state"])
    root, _ = chart(sid)
    check_chart(root, cancelled)


def test_report_svg_escapes():
    """Ids with XML's special characters come out as text, not markup."""
    # Also names that a script's plain objects already have as keys.
    a, b, c, d = 'A<&>', 'B"\'', "C \u00e9t\u00e9", "__proto__"
    l1, l2, l3, l4 = 'L<1>&"x"', "L'2'", "L3]]>", "constructor"
    topo = {"nodes": [{"id": a}, {"id": b}, {"id": c}, {"id": d}],
            "links": [{"id": l1, "a": a, "b": b, "capacity_bps": 1e10, "te_metric": 1},
                      {"id": l2, "a": b, "b": c, "capacity_bps": 1e10, "te_metric": 1},
                      {"id": l3, "a": a, "b": c, "capacity_bps": 1e10, "te_metric": 1},
                      {"id": l4, "a": c, "b": d, "capacity_bps": 1e10, "te_metric": 1}]}
    check(D.put("/v1/topology", topo).status == 200, "PUT topology")
    check(D.put("/v1/matrices/esc", {"demands": [{"src": a, "dst": c, "rate_bps": 4e9},
                                                 {"src": b, "dst": a, "rate_bps": 3e9},
                                                 {"src": d, "dst": b, "rate_bps": 1e9}]}).status == 200,
          "PUT matrix")
    r = D.put("/v1/policy", {"objective": "balance", "headroom": 0.8, "matrix": "esc"})
    D.wait_plan(r.json()["model_revision"], verify=False)
    r = D.request("POST", "/v1/sweeps", {"kind": "links"})
    check(r.status == 202, "POST sweep: %r" % r)
    s = wait_sweep(r.json()["id"], timeout=120)
    check(s["state"] == "done", "sweep %s" % s["state"])
    root, body = chart(s["id"])
    check_chart(root, s)
    check(b'L<1>' not in body, "an id went out unescaped")
    labels = " ".join("".join(t.itertext()) for t in root.iter(SVGNS + "text") if "label" in classes(t))
    for lid in (l1, l2, l3, l4):
        check(lid in labels, "the label of %r is missing: %r" % (lid, labels))
    # And the page draws these ids too.
    open_page()
    loads = D.get("/v1/plan/loads").json()
    wait_page_revision(loads["revision"])
    check_map([(l["id"], l["state"]) for l in loads["links"]], loads_utils(loads), set(), 0.8,
              "map of odd ids")
    check(len(drawn_dirs()) == 8, "odd ids: directions drawn %d" % len(drawn_dirs()))


def test_layout_without_coordinates():
    """Nodes without coordinates get the automatic layout: every node
    inside the drawing, no two on top of each other, the same twice."""
    def positions():
        B.get(D.base + "/")
        wait_for("the page", lambda: page_state()[0] == "ready")
        return drawn()["nodes"]
    first = positions()
    second = positions()
    check(first == second, "the layout differs between two loads")
    check(len(first) == 4, "%d nodes drawn" % len(first))
    for _, x, y in first:
        check(0 <= x <= 1000 and 0 <= y <= 640, "a node lies outside the drawing: %r" % ((x, y),))
    for i in range(len(first)):
        for j in range(i + 1, len(first)):
            d = ((first[i][1] - first[j][1]) ** 2 + (first[i][2] - first[j][2]) ** 2) ** 0.5
            check(d > 40, "nodes %s and %s are %.1f px apart" % (first[i][0], first[j][0], d))
    png_ok(screenshot("map-layout.png", "#page-top"))


# ---------------------------------------------------------------------------
# A continental network: the Kdl topology (Internet Topology Zoo, 754 nodes,
# 899 links with coordinates; tests/data/PROVENANCE.md) with the seeded
# synthetic traffic of tests/bench/synth.py, in a daemon of its own.  The
# checks are functional (every node and link drawn, a pan moves the view, a
# link-down recolours to the new loads, the page keeps answering scripts
# while panning); the timings are measured in the page (performance.now(),
# PerformanceObserver 'longtask') and only recorded, never asserted.
# ---------------------------------------------------------------------------
KDL_SITES = 30
KDL_HEADROOM = 0.9
KDL_TIMINGS = os.path.join(ARTIFACTS, "kdl-timings.json")
PAN_STEPS = 40

# Installed before the page's own scripts: long tasks, the arrival of each
# "plan" event, and for each change of body[data-state] or [data-revision]
# the time it happened and the end of the frame after it (a task posted
# from the next animation frame runs once that frame is drawn).
PERF_HOOK = r"""
(function () {
    var P = window.__weftPerf = { long: [], plans: [], marks: [] };
    P.afterFrame = function (cb) {
        requestAnimationFrame(function () {
            var ch = new MessageChannel();
            ch.port1.onmessage = function () { cb(performance.now()); };
            ch.port2.postMessage(0);
        });
    };
    try {
        new PerformanceObserver(function (l) {
            l.getEntries().forEach(function (e) { P.long.push([e.startTime, e.duration]); });
        }).observe({ type: "longtask", buffered: true });
    } catch (e) { P.noLongtask = String(e); }
    var Real = window.EventSource;
    if (Real) {
        var Wrap = function (u, o) {
            var es = new Real(u, o);
            es.addEventListener("plan", function (ev) { P.plans.push([performance.now(), ev.data]); });
            return es;
        };
        Wrap.prototype = Real.prototype;
        Wrap.CONNECTING = Real.CONNECTING; Wrap.OPEN = Real.OPEN; Wrap.CLOSED = Real.CLOSED;
        window.EventSource = Wrap;
    }
    new MutationObserver(function (ms) {
        ms.forEach(function (m) {
            var rec = [m.attributeName, m.target.getAttribute(m.attributeName), performance.now(), null];
            P.marks.push(rec);
            P.afterFrame(function (t) { rec[3] = t; });
        });
    }).observe(document, { subtree: true, attributes: true,
                           attributeFilter: ["data-state", "data-revision"] });
})();
"""

# Pans by PAN_STEPS pointer moves, one per frame, and times each from the
# move to the end of the frame that drew it; every step is itself a script
# the page runs while panning.
PAN_SCRIPT = r"""
var done = arguments[arguments.length - 1], x0 = arguments[0], y0 = arguments[1],
    n = arguments[2], m = document.getElementById('map'), x = x0, y = y0, out = [], i = 0;
function ev(type) {
    m.dispatchEvent(new PointerEvent(type, { pointerId: 1, isPrimary: true, pointerType: 'mouse',
        button: 0, buttons: type === 'pointerup' ? 0 : 1, clientX: x, clientY: y,
        bubbles: true, cancelable: true }));
}
ev('pointerdown');
function step() {
    if (i++ >= n) { ev('pointerup'); done(out); return; }
    var t0 = performance.now();
    x += 3; y += 2;
    ev('pointermove');
    window.__weftPerf.afterFrame(function (t1) { out.push(t1 - t0); step(); });
}
step();
"""


def longest(entries, since=0.0):
    return max([d for t, d in entries if t >= since] or [0])


def empty_point():
    """A viewport point on the map where no link is (weftMap.hit), as near
    the middle as the grid finds."""
    d = drawn()
    best = None
    for i in range(10, 91, 2):
        for j in range(10, 91, 2):
            x, y = d["width"] * i / 100, d["height"] * j / 100
            if js("return window.weftMap.hit(arguments[0], arguments[1]);", x, y) is None:
                k = (i - 50) ** 2 + (j - 50) ** 2
                if best is None or k < best[0]:
                    best = (k, x, y)
    check(best is not None, "no empty place on the map to start a pan")
    return best[1], best[2]


def test_kdl_map():
    global D
    import json
    import statistics
    import subprocess
    live = D
    tmp = tempfile.mkdtemp(prefix="weft-kdl-")
    hook = None
    try:
        out = os.path.join(tmp, "kdl.json")
        subprocess.run(["/usr/bin/python3", os.path.join(ROOT, "tests", "bench", "synth.py"),
                        "--sites", str(KDL_SITES), "--out", out], check=True,
                       stdout=subprocess.DEVNULL, timeout=300)
        with open(out) as f:
            case = json.load(f)
        D = Daemon()
        for path, body in (("/v1/topology", case["topology"]),
                           ("/v1/matrices/kdl", {"demands": case["demands"]})):
            r = D.put(path, body)
            check(r.status == 200, "PUT %s: %r" % (path, r))
        r = D.put("/v1/policy", {"objective": "balance", "headroom": KDL_HEADROOM, "matrix": "kdl"})
        plan = D.wait_plan(r.json()["model_revision"], verify=False)
        check(plan["status"] == "optimal", "the Kdl plan is %s" % plan["status"])
        topo = D.get("/v1/topology").json()
        check(len(topo["nodes"]) == len(case["topology"]["nodes"]) and
              len(topo["links"]) == len(case["topology"]["links"]), "the daemon holds another topology")

        hook = B.execute_cdp_cmd("Page.addScriptToEvaluateOnNewDocument", {"source": PERF_HOOK})
        B.get(D.base + "/")
        loads = D.get("/v1/plan/loads").json()
        wait_page_revision(loads["revision"], timeout=180)

        # Every node and every link direction drawn, in the loads' colours.
        d = drawn()
        want_nodes = {n["id"] for n in topo["nodes"]}
        got_nodes = [n[0] for n in d["nodes"]]
        check(len(got_nodes) == len(want_nodes) and set(got_nodes) == want_nodes,
              "nodes drawn %d, the topology has %d" % (len(got_nodes), len(want_nodes)))
        check(d["culled"] == 0, "%d links left out of the first view" % d["culled"])
        ndirs, nover = check_map([(l["id"], l["state"]) for l in loads["links"]], loads_utils(loads),
                                 set(), KDL_HEADROOM, "Kdl map")
        check(ndirs == 2 * len(topo["links"]), "directions drawn %d for %d links"
              % (ndirs, len(topo["links"])))
        png_ok(screenshot("map-kdl.png", "#page-top"))
        perf = js("return window.__weftPerf;")
        first = [m for m in perf["marks"] if m[0] == "data-state" and m[1] == "ready"]
        check(first and first[0][3] is not None, "no first drawing recorded: %r" % perf["marks"][:4])
        t = {"nodes": len(want_nodes), "links": len(topo["links"]), "directions": ndirs,
             "first_draw_ms": round(first[0][3], 1),
             "longest_long_task_load_ms": longest(perf["long"]),
             "longtask_observed": "noLongtask" not in perf}

        # A pan by real mouse input moves the view and every node with it.
        js("document.getElementById('map').scrollIntoView({block: 'center'});")
        x, y = empty_point()
        before = {n[0]: (n[1], n[2]) for n in drawn()["nodes"]}
        cx, cy = client_point(x, y)
        mouse("mouseMoved", cx, cy)
        mouse("mousePressed", cx, cy, buttons=1, button="left", clicks=1)
        for k in range(1, 11):
            mouse("mouseMoved", cx + 6 * k, cy + 3 * k, buttons=1)
        mouse("mouseReleased", cx + 60, cy + 30, button="left", clicks=1)
        after = drawn()
        f = after["width"] / js("return document.getElementById('map').getBoundingClientRect().width;")
        moved = [(p[1] - before[p[0]][0], p[2] - before[p[0]][1]) for p in after["nodes"]]
        check(all(abs(dx - 60 * f) < 0.01 and abs(dy - 30 * f) < 0.01 for dx, dy in moved),
              "a drag of (60, 30) px moved the nodes by %s... (expected %.2f, %.2f)"
              % (moved[:2], 60 * f, 30 * f))
        check(js("return document.body.dataset.state") == "ready", "the page is not ready after the pan")

        # The pan timed in the page; each step is a script the page runs.
        js("document.getElementById('map').dispatchEvent(new MouseEvent('dblclick'));")
        x, y = client_point(*empty_point())
        n0 = js("return performance.now();")
        frames = B.execute_async_script(PAN_SCRIPT, x, y, PAN_STEPS)
        check(len(frames) == PAN_STEPS, "%d of %d pan steps ran" % (len(frames), PAN_STEPS))
        check(js("return 6 * 7;") == 42, "the page does not run a script after the pan")
        perf = js("return window.__weftPerf;")
        t["pan_frame_ms_median"] = round(statistics.median(frames), 1)
        t["pan_frame_ms_max"] = round(max(frames), 1)
        t["longest_long_task_pan_ms"] = longest(perf["long"], n0)
        # The drag's frames move the last whole frame; the one after the
        # drag draws everything again (the page's own measure of it).
        t["whole_frame_ms"] = round(drawn()["full_frame_ms"], 1)
        check(drawn()["view"]["x"] > 0, "the timed pan did not move the view: %r" % drawn()["view"])
        js("document.getElementById('map').dispatchEvent(new MouseEvent('dblclick'));")
        check(drawn()["view"] == {"k": 1, "x": 0, "y": 0}, "a double click leaves the view at %r"
              % drawn()["view"])
        # The keyboard: on the focused map an arrow pans, 0 resets.
        B.find_element("id", "map").send_keys("\ue012")      # WebDriver's ArrowLeft
        check(js("return document.activeElement.id") == "map", "the map takes no focus")
        check(drawn()["view"]["x"] > 0 and drawn()["view"]["y"] == 0,
              "ArrowLeft leaves the view at %r" % drawn()["view"])
        B.find_element("id", "map").send_keys("0")
        check(drawn()["view"] == {"k": 1, "x": 0, "y": 0}, "0 leaves the view at %r" % drawn()["view"])

        # A link down: a new plan, and the map recoloured to its loads.
        up = [l for l in loads["links"] if l["state"] == "up"]
        victim = max(up, key=lambda l: (l["a_to_b"]["load_bps"] + l["b_to_a"]["load_bps"], l["id"]))
        n0 = js("return performance.now();")
        r = D.request("PATCH", "/v1/links/" + victim["id"], {"state": "down"})
        check(r.status == 200, "PATCH %s down: %r" % (victim["id"], r))
        plan = D.wait_plan(r.json()["model_revision"], verify=False)
        check(plan["status"] == "optimal", "the plan without %s is %s" % (victim["id"], plan["status"]))
        new = D.get("/v1/plan/loads").json()
        check(new["revision"] == plan["revision"], "the plan moved during the test")
        wait_page_revision(new["revision"], timeout=180)
        check({l["id"] for l in new["links"] if l["state"] != "up"} == {victim["id"]},
              "the loads do not show %s down" % victim["id"])
        check_map([(l["id"], l["state"]) for l in new["links"]], loads_utils(new), {victim["id"]},
                  KDL_HEADROOM, "Kdl map without %s" % victim["id"])
        changed = sum(1 for a, b in zip(loads["links"], new["links"])
                      for dd in ("a_to_b", "b_to_a")
                      if expected_rgb(a[dd]["utilization"]) != expected_rgb(b[dd]["utilization"]))
        check(changed > 0, "taking %s down changed no colour" % victim["id"])
        perf = js("return window.__weftPerf;")
        ev = [p for p in perf["plans"] if json.loads(p[1])["revision"] == new["revision"]]
        mk = [m for m in perf["marks"] if m[0] == "data-revision" and m[1] == str(new["revision"])]
        t["link_down"] = victim["id"]
        t["directions_recoloured"] = changed
        if ev and mk and mk[-1][3] is not None:
            t["recolour_ms"] = round(mk[-1][3] - ev[0][0], 1)
        else:
            t["recolour_ms"] = None     # the page learnt of the plan otherwise
        t["longest_long_task_recolour_ms"] = longest(perf["long"], n0)
        t["longest_long_task_ms"] = longest(perf["long"])
        t["long_tasks"] = len(perf["long"])
        t["live"] = page_state()[3]
        png_ok(screenshot("map-kdl-down.png", "#page-top"))
        os.makedirs(ARTIFACTS, exist_ok=True)
        with open(KDL_TIMINGS, "w") as f:
            json.dump(t, f, indent=1, sort_keys=True)
        print("# Kdl (%d nodes, %d links): first draw %.0f ms, pan frame median %.1f ms (max %.1f), "
              "whole frame %.1f ms, recolour %s ms, longest long task %d ms (load %d, pan %d, "
              "recolour %d); %s"
              % (t["nodes"], t["links"], t["first_draw_ms"], t["pan_frame_ms_median"],
                 t["pan_frame_ms_max"], t["whole_frame_ms"], t["recolour_ms"], t["longest_long_task_ms"],
                 t["longest_long_task_load_ms"], t["longest_long_task_pan_ms"],
                 t["longest_long_task_recolour_ms"], os.path.relpath(KDL_TIMINGS, ROOT)))
    finally:
        if hook is not None:
            B.execute_cdp_cmd("Page.removeScriptToEvaluateOnNewDocument",
                              {"identifier": hook["identifier"]})
        if D is not live:
            B.get("about:blank")
            D.stop()
            D = live
        shutil.rmtree(tmp, ignore_errors=True)


CASES = [test_page_files, test_live_map, test_table_sorts, test_link_details, test_whatif,
         test_live_update, test_live_polling, test_sweep_view, test_report_svg, test_report_svg_escapes,
         test_layout_without_coordinates, test_kdl_map]


def start_browser(profile):
    from selenium import webdriver
    from selenium.webdriver.chrome.service import Service

    class LoopbackService(Service):
        """chromedriver reached at 127.0.0.1, not at "localhost", which a
        minimal system without /etc/hosts cannot resolve."""

        @property
        def service_url(self):
            return "http://127.0.0.1:%d" % self.port

        def is_connectable(self):
            import socket
            try:
                socket.create_connection(("127.0.0.1", self.port), timeout=1).close()
                return True
            except OSError:
                return False

    o = webdriver.ChromeOptions()
    o.binary_location = CHROMIUM
    for a in ("--headless=new", "--no-sandbox", "--disable-gpu", "--disable-dev-shm-usage", "--hide-scrollbars",
              "--window-size=1400,1000", "--user-data-dir=" + profile, "--no-first-run",
              "--disable-extensions", "--disable-background-networking", "--lang=en-GB"):
        o.add_argument(a)
    b = webdriver.Chrome(service=LoopbackService(CHROMEDRIVER), options=o)
    b.set_page_load_timeout(60)
    b.set_script_timeout(60)
    return b


def on_alarm(*_):
    raise Fail("the browser test ran past %d s" % TOTAL_S)


def main():
    global D, B
    for p in (CHROMIUM, CHROMEDRIVER):
        if not os.access(p, os.X_OK):
            print("Bail out! %s is missing: run sh deploy/install-deps.sh "
                  "(chromium chromium-driver python3-selenium)" % p)
            return 1
    signal.signal(signal.SIGALRM, on_alarm)
    signal.alarm(TOTAL_S)
    profile = tempfile.mkdtemp(prefix="weft-chromium-")
    passed = failed = 0
    try:
        D = Daemon()
        with open(INSTANCE, "rb") as f:
            r = D.request("POST", "/v1/import?format=sndlib&matrix=g50", f.read(), ctype="text/plain")
        if r.status != 200:
            raise Fail("import: %r" % r)
        m = D.get("/v1/matrices/g50").json()
        for d in m["demands"]:
            d["rate_bps"] *= DEMAND_SCALE
        D.put("/v1/matrices/g50", m)
        D.put("/v1/policy", {"objective": "balance", "headroom": HEADROOM, "matrix": "g50"})
        plan = D.wait_plan(D.get("/v1/health").json()["model_revision"], verify=False)
        check(plan["status"] == "optimal", "the plan of a fifth of germany50 is %s" % plan["status"])
        # The link to take down: the first whose loss still lets all fit.
        topo = D.get("/v1/topology").json()
        down = None
        for l in topo["links"]:
            w = D.request("POST", "/v1/whatif", {"fail": {"links": [l["id"]]}}, timeout=120)
            if w.status == 200 and w.json()["plan"]["status"] == "optimal":
                down = l["id"]
                break
        check(down is not None, "every single link failure leaves traffic unserved")
        r = D.request("PATCH", "/v1/links/" + down, {"state": "down"})
        CTX["down"] = {down}
        plan = D.wait_plan(r.json()["model_revision"], verify=False)
        print("# germany50 x %g, balance, %s down: %s, max utilisation %.3f"
              % (DEMAND_SCALE, down, plan["status"], plan["max_utilization"]))
        B = start_browser(profile)
        # Case names on the command line run only those (the set-up above
        # still runs): map_test.py kdl_map
        cases = [c for c in CASES if not sys.argv[1:] or c.__name__[5:] in sys.argv[1:]]
        print("1..%d" % len(cases))
        for i, case in enumerate(cases, 1):
            name = case.__name__[5:]
            try:
                case()
                passed += 1
                print("ok %d - %s" % (i, name))
            except Exception as e:  # noqa: BLE001 - report and go on
                failed += 1
                print("not ok %d - %s: %s" % (i, name, e))
                if not isinstance(e, Fail):
                    traceback.print_exc()
            sys.stdout.flush()
        # Script errors on the page fail the run; network messages (the
        # event stream's 404 where the daemon has none) are only shown.
        errors = 0
        for entry in B.get_log("browser"):
            if entry["level"] == "SEVERE":
                print("# browser console: %s" % entry["message"])
                errors += entry.get("source") == "javascript"
        if errors:
            failed += 1
            print("not ok - %d script errors on the page" % errors)
    except Exception:
        traceback.print_exc()
        failed += 1
    finally:
        signal.alarm(0)
        if B is not None:
            B.quit()
        if D is not None:
            if failed:
                print("# daemon log tail:\n# " + "\n# ".join(D.log_text().splitlines()[-15:]))
            D.stop()
        shutil.rmtree(profile, ignore_errors=True)
    print("%d passed, %d failed" % (passed, failed))
    return 1 if failed else 0


if __name__ == "__main__":
    sys.exit(main())
