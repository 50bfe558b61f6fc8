#!/usr/bin/python3
# SPDX-License-Identifier: GPL-3.0-or-later
"""Large plans over HTTP: filtered and paged routes and loads, streamed and
compressed replies.

Run from the repository root with /usr/bin/python3 (make check-integration
runs it after run.py).  Starts its own weftd on 127.0.0.1 (WEFT_TEST_ADDR is
ignored: the cases load their own instances).  Each case prints "ok N -
name" or "not ok N - name"; every case is bounded in time (CASE_TIMEOUT_S)
besides the per-request timeouts.

Instances: the seeded synthetic generator tests/bench/synth.py on the Kdl
topology (Internet Topology Zoo, tests/data/PROVENANCE.md): 12 sites (132
demands) for most cases, 100 sites (9,900 demands) for the large one.

The checks are against things outside weft, named beside each:
  - the unpaged reply itself, filtered and cut by this file in Python: pages
    put together must equal it, and each filter must equal Python's filter
    of it (a demand "uses" a link when one of its paths lists the link);
  - Python's gzip module (RFC 1952) and zlib module (RFC 1950, the HTTP
    "deflate" coding) decode compressed bodies, which must equal the
    identity body byte for byte;
  - RFC 9110: content negotiation with q-values, "*" and identity;q=0
    (12.5.3), Vary (12.5.5), entity tags per representation (8.8.3) and
    If-None-Match / 304 (13.1.2, 15.4.5); RFC 9112, 7.1: a streamed body
    without Content-Length goes chunked.
"""
import gzip
import http.client
import json
import os
import sys
import time
import urllib.parse
import zlib

ROOT = os.path.dirname(os.path.dirname(os.path.dirname(os.path.abspath(__file__))))
sys.path.insert(0, os.path.join(ROOT, "tests", "lib"))
sys.path.insert(0, os.path.join(ROOT, "tests", "bench"))
os.environ.pop("WEFT_TEST_ADDR", None)
from weftd import Daemon  # noqa: E402
import cases  # noqa: E402
from cases import Fail, check  # noqa: E402
import synth  # noqa: E402

CASE_TIMEOUT_S = 240
SMALL_SITES = 12
LARGE_SITES = 100
D = None        # the daemon, started by main()
SMALL = None    # the small instance (synth.build)


def header(r, name):
    """Header name of reply r, case-insensitively; None when absent."""
    for k, v in r.headers.items():
        if k.lower() == name.lower():
            return v
    return None


def get(path, accept_encoding=None, inm=None, timeout=120):
    hdrs = {}
    if accept_encoding is not None:
        hdrs["Accept-Encoding"] = accept_encoding
    if inm is not None:
        hdrs["If-None-Match"] = inm
    return D.get(path, headers=hdrs, timeout=timeout)


def ok_json(path, **kw):
    r = get(path, **kw)
    check(r.status == 200, "GET %s: %d %s" % (path, r.status, r.body[:300]))
    return r.json()


def decode(r):
    """The identity bytes of reply r: gzip bodies through Python's gzip
    module (RFC 1952), deflate bodies through its zlib module (RFC 1950)."""
    enc = header(r, "Content-Encoding")
    if enc is None:
        return r.body
    if enc == "gzip":
        return gzip.decompress(r.body)
    if enc == "deflate":
        return zlib.decompress(r.body)
    raise Fail("unexpected Content-Encoding %r" % enc)


def load(sites, objective):
    """Loads synth.py's instance of sites sites; returns (instance, plan
    summary)."""
    inst = synth.build(sites=sites)
    check(D.put("/v1/topology", inst["topology"]).status == 200, "topology")
    check(D.put("/v1/matrices/syn", {"demands": inst["demands"]}).status == 200, "matrix")
    r = D.put("/v1/policy", {"objective": objective, "headroom": 1.0, "matrix": "syn",
                             "formulation": "path"})
    check(r.status == 200, "policy: %d %s" % (r.status, r.body[:200]))
    plan = D.wait_plan(r.json()["model_revision"], timeout=200, verify=False)
    return inst, plan


def walk(path, limit, key, params="", accept_encoding=None):
    """Every page of path (limit entries each) from the first; returns
    (entries, pages, revisions seen)."""
    entries, pages, revs = [], 0, set()
    q = "limit=%d" % limit + ("&" + params if params else "")
    url = path + "?" + q
    while True:
        r = get(url, accept_encoding=accept_encoding)
        check(r.status == 200, "GET %s: %d %s" % (url, r.status, r.body[:300]))
        j = json.loads(decode(r))
        check("next" in j, "a page says next: %s" % list(j))
        check(len(j[key]) <= limit, "page of %d entries, limit %d" % (len(j[key]), limit))
        entries += j[key]
        revs.add(j["revision"])
        pages += 1
        check(pages < 100000, "too many pages")
        if j["next"] is None:
            return entries, pages, revs
        check(len(j[key]) == limit, "a page before the last is full: %d" % len(j[key]))
        url = path + "?" + q + "&after=" + urllib.parse.quote(j["next"])


def uses(route, link):
    return any(link in p["links"] for p in route["paths"])


# ---------------------------------------------------------------------------
# Shapes and paging


def test_unpaged_shape():
    for path, keys in (("/v1/plan/routes", ["revision", "model_revision", "routes"]),
                       ("/v1/plan/loads", ["revision", "model_revision", "links",
                                           "max_utilization"])):
        r = get(path)
        check(r.status == 200, "%s: %d" % (path, r.status))
        j = r.json()
        check(list(j) == keys, "%s keys %s (as before paging)" % (path, list(j)))
        check(header(r, "ETag") == '"%d"' % j["revision"], "ETag %r" % header(r, "ETag"))
        check(header(r, "Vary") == "Accept-Encoding", "Vary %r" % header(r, "Vary"))
        check(header(r, "Content-Encoding") is None, "no coding unasked")
    check(len(ok_json("/v1/plan/routes")["routes"]) == len(SMALL["demands"]),
          "one route per demand")


def test_streamed_reply_is_chunked():
    # RFC 9112, 7.1: a reply without Content-Length on HTTP/1.1 is chunked.
    c = http.client.HTTPConnection(D.base[len("http://"):], timeout=60)
    try:
        c.request("GET", "/v1/plan/routes")
        r = c.getresponse()
        body = r.read()
        check(r.status == 200, "status %d" % r.status)
        check(r.getheader("Content-Length") is None, "no Content-Length")
        check((r.getheader("Transfer-Encoding") or "").lower() == "chunked",
              "Transfer-Encoding %r" % r.getheader("Transfer-Encoding"))
        check(body == get("/v1/plan/routes").body, "same body on a second read")
    finally:
        c.close()


def test_pages_equal_unpaged():
    whole = ok_json("/v1/plan/routes")
    for limit in (1, 7, 50, len(whole["routes"]), len(whole["routes"]) + 1):
        entries, pages, revs = walk("/v1/plan/routes", limit, "routes")
        check(entries == whole["routes"], "routes in pages of %d differ" % limit)
        check(revs == {whole["revision"]}, "one revision: %s" % revs)
        check(pages == max(1, -(-len(whole["routes"]) // limit)),
              "pages of %d: %d" % (limit, pages))
    loads = ok_json("/v1/plan/loads")
    for limit in (1, 100, 899, 1000):
        entries, pages, revs = walk("/v1/plan/loads", limit, "links")
        check(entries == loads["links"], "links in pages of %d differ" % limit)
    j = ok_json("/v1/plan/loads?limit=5")
    check(j["max_utilization"] == loads["max_utilization"], "a page keeps max_utilization")
    check(list(j) == ["revision", "model_revision", "links", "max_utilization", "next"],
          "page keys %s" % list(j))


def test_route_filters():
    whole = ok_json("/v1/plan/routes")["routes"]
    srcs = sorted({d["src"] for d in whole})
    dsts = sorted({d["dst"] for d in whole})
    used = {}
    for d in whole:
        for p in d["paths"]:
            for l in p["links"]:
                used[l] = used.get(l, 0) + 1
    busiest = sorted(used, key=lambda l: (-used[l], l))[:3]
    topo = ok_json("/v1/topology")
    unused = [l["id"] for l in topo["links"] if l["id"] not in used][:1]
    check(len(busiest) == 3 and unused, "the instance has used and unused links")
    multi = [d for d in whole if len(d["paths"]) > 1]
    # A link on a second path only: the filter must look at every path.
    second = [l for d in multi for l in d["paths"][1]["links"]
              if not any(l in p["links"] for p in d["paths"][:1])][:1]
    cases_ = [("src", s) for s in srcs[:3]] + [("dst", t) for t in dsts[:3]]
    cases_ += [("link", l) for l in busiest + unused + second]
    cases_ += [("src&dst", (srcs[0], dsts[-1])), ("src&link", (srcs[1], busiest[0]))]
    for kind, v in cases_:
        if kind == "src&dst":
            want = [d for d in whole if d["src"] == v[0] and d["dst"] == v[1]]
            q = "src=%s&dst=%s" % tuple(urllib.parse.quote(x) for x in v)
        elif kind == "src&link":
            want = [d for d in whole if d["src"] == v[0] and uses(d, v[1])]
            q = "src=%s&link=%s" % tuple(urllib.parse.quote(x) for x in v)
        else:
            want = [d for d in whole if (uses(d, v) if kind == "link" else d[kind] == v)]
            q = "%s=%s" % (kind, urllib.parse.quote(v))
        got = ok_json("/v1/plan/routes?" + q)
        check(got["routes"] == want, "%s: %d routes, Python's filter %d"
              % (q, len(got["routes"]), len(want)))
        check("next" not in got, "%s unpaged: no next" % q)
        paged, _, _ = walk("/v1/plan/routes", 3, "routes", q)
        check(paged == want, "%s in pages of 3" % q)


def test_load_filters():
    whole = ok_json("/v1/plan/loads")["links"]
    nodes = sorted({l["a"] for l in whole})[:4]
    for n in nodes:
        want = [l for l in whole if n in (l["a"], l["b"])]
        got = ok_json("/v1/plan/loads?node=" + urllib.parse.quote(n))["links"]
        check(got == want, "node %s: %d links, Python's filter %d" % (n, len(got), len(want)))
    for l in (whole[0], whole[len(whole) // 2], whole[-1]):
        got = ok_json("/v1/plan/loads?link=" + urllib.parse.quote(l["id"]))["links"]
        check(got == [l], "link %s" % l["id"])
        got = ok_json("/v1/plan/loads?link=%s&node=%s" % (
            urllib.parse.quote(l["id"]), urllib.parse.quote(l["b"])))["links"]
        check(got == [l], "link %s at its node b" % l["id"])
    other = next(x for x in whole if whole[0]["a"] not in (x["a"], x["b"]))
    got = ok_json("/v1/plan/loads?link=%s&node=%s" % (
        urllib.parse.quote(other["id"]), urllib.parse.quote(whole[0]["a"])))
    check(got["links"] == [], "a link not at the node: none")


def test_bad_parameters():
    rev = ok_json("/v1/plan")["revision"]
    n = len(SMALL["demands"])
    bad = [
        ("/v1/plan/routes?limit=0", "limit"), ("/v1/plan/routes?limit=-1", "limit"),
        ("/v1/plan/routes?limit=1.5", "limit"), ("/v1/plan/routes?limit=x", "limit"),
        ("/v1/plan/routes?limit=", "limit"), ("/v1/plan/routes?limit=1000001", "limit"),
        ("/v1/plan/loads?limit=%2B3", "limit"),
        ("/v1/plan/routes?after=", "after"), ("/v1/plan/routes?after=12", "after"),
        ("/v1/plan/routes?after=x.1", "after"), ("/v1/plan/routes?after=0.1", "after"),
        ("/v1/plan/routes?after=%d.-1" % rev, "after"),
        ("/v1/plan/routes?after=%d.%d" % (rev, n + 1), "after"),
        ("/v1/plan/loads?after=%d.900" % rev, "after"),
        ("/v1/plan/routes?foo=1", "foo"), ("/v1/plan/routes?node=A", "node"),
        ("/v1/plan/loads?src=A", "src"), ("/v1/plan/routes?limit=1&limit=2", "limit"),
        ("/v1/plan/routes?src", "src"), ("/v1/plan/routes?src=", "src"),
        ("/v1/plan/loads?link=", "link"),
    ]
    for path, where in bad:
        r = get(path)
        check(r.status == 400, "%s: %d %s" % (path, r.status, r.body[:200]))
        e = r.json()["error"]
        check(e["code"] == "invalid" and e["where"] == where and e["message"],
              "%s: error %s" % (path, e))
    for path, where in (("/v1/plan/routes?src=NO_SUCH_NODE", "src"),
                        ("/v1/plan/routes?link=NO_SUCH_LINK", "link"),
                        ("/v1/plan/loads?node=NO_SUCH_NODE", "node")):
        r = get(path)
        check(r.status == 404 and r.json()["error"]["where"] == where,
              "%s: %d %s" % (path, r.status, r.body[:200]))
    # The end of the list is a valid cursor: an empty last page.
    j = ok_json("/v1/plan/routes?after=%d.%d" % (rev, n))
    check(j["routes"] == [] and j["next"] is None, "cursor at the end")


def test_cursor_across_revisions():
    before = ok_json("/v1/plan/routes")
    first = ok_json("/v1/plan/routes?limit=40")
    check(first["next"] is not None, "a second page exists")
    # A new plan: one link's metric changes.
    link = SMALL["topology"]["links"][0]["id"]
    r = D.request("PATCH", "/v1/links/" + urllib.parse.quote(link, safe=""),
                  {"te_metric": 7777})
    check(r.status == 200, "PATCH: %d %s" % (r.status, r.body[:200]))
    now = D.wait_plan(r.json()["model_revision"], timeout=120, verify=False)
    check(now["revision"] > before["revision"], "a newer plan")
    # The cursor keeps naming its plan, still kept: the same walk.
    entries = list(first["routes"])
    nxt = first["next"]
    while nxt is not None:
        j = ok_json("/v1/plan/routes?limit=40&after=" + urllib.parse.quote(nxt))
        check(j["revision"] == before["revision"], "page of revision %d" % j["revision"])
        entries += j["routes"]
        nxt = j["next"]
    check(entries == before["routes"], "pages of the old plan equal its unpaged reply")
    check(ok_json("/v1/plan/routes")["revision"] == now["revision"], "unpaged: the newest")
    # A plan that is not kept (never published): 409, naming after.
    for cur in ("%d.0" % (now["revision"] + 1000), "999999999.3"):
        r = get("/v1/plan/routes?after=" + cur)
        check(r.status == 409, "cursor %s: %d %s" % (cur, r.status, r.body[:200]))
        e = r.json()["error"]
        check(e["code"] == "conflict" and e["where"] == "after", "error %s" % e)


# ---------------------------------------------------------------------------
# Compression and entity tags


def test_codings_decode_to_identity():
    paths = ["/v1/plan/routes", "/v1/plan/loads", "/v1/plan/routes?limit=9",
             "/v1/plan/loads?limit=5", "/v1/topology", "/v1/matrices/syn",
             "/v1/plan", "/v1/plan/forwarding", "/v1/model"]
    for path in paths:
        ident = get(path)
        check(ident.status == 200, "%s: %d" % (path, ident.status))
        check(header(ident, "Content-Encoding") is None, "%s: identity" % path)
        check(header(ident, "Vary") == "Accept-Encoding", "%s: Vary %r" % (path, header(ident, "Vary")))
        for coding, decoder in (("gzip", gzip.decompress), ("deflate", zlib.decompress)):
            # identity;q=0 makes even a small body coded.
            r = get(path, accept_encoding="%s, identity;q=0" % coding)
            check(r.status == 200, "%s %s: %d" % (path, coding, r.status))
            check(header(r, "Content-Encoding") == coding,
                  "%s: Content-Encoding %r" % (path, header(r, "Content-Encoding")))
            check(header(r, "Vary") == "Accept-Encoding", "%s %s: Vary" % (path, coding))
            # Python's gzip (RFC 1952) / zlib (RFC 1950) module decodes.
            check(decoder(r.body) == ident.body, "%s: %s body decodes to identity" % (path, coding))
            tag = header(ident, "ETag")
            if tag is not None:
                check(header(r, "ETag") == tag[:-1] + "-" + coding + '"',
                      "%s: ETag %r" % (path, header(r, "ETag")))


def test_negotiation():
    # RFC 9110, 12.5.3: each value and the coding it must select for a
    # large body (the routes of the small instance, well over 1 KiB).
    table = [
        (None, None), ("", None), ("gzip", "gzip"), ("deflate", "deflate"),
        ("gzip, deflate", "gzip"), ("deflate;q=1, gzip;q=0.5", "deflate"),
        ("gzip;q=0", None), ("gzip;q=0, deflate", "deflate"), ("*", "gzip"),
        ("*;q=0", None), ("identity;q=0", None), ("br", None), ("GZIP", "gzip"),
        ("x-gzip", "gzip"), ("gzip;q=0.5, identity", None), ("identity;q=0.5, *", "gzip"),
        ("gzip;q=1.5", None), ("identity;q=0, deflate;q=0.001", "deflate"),
    ]
    ident = get("/v1/plan/routes").body
    for value, want in table:
        r = get("/v1/plan/routes", accept_encoding=value)
        check(r.status == 200, "%r: %d" % (value, r.status))
        got = header(r, "Content-Encoding")
        check(got == want, "Accept-Encoding %r: Content-Encoding %r, want %r" % (value, got, want))
        check(decode(r) == ident, "%r: decodes to identity" % value)
    # A tiny body stays as it is while identity is acceptable.
    r = get("/v1/health", accept_encoding="gzip")
    check(r.status == 200 and header(r, "Content-Encoding") is None, "tiny body not coded")
    check(header(r, "Vary") == "Accept-Encoding", "tiny body: Vary all the same")
    r = get("/v1/health", accept_encoding="identity;q=0, gzip")
    check(header(r, "Content-Encoding") == "gzip" and json.loads(gzip.decompress(r.body)),
          "tiny body coded when identity is refused")
    # Event streams are never coded (events must not wait in a compressor).
    c = http.client.HTTPConnection(D.base[len("http://"):], timeout=30)
    try:
        c.request("GET", "/v1/events", headers={"Accept-Encoding": "gzip"})
        r = c.getresponse()
        check(r.status == 200 and r.getheader("Content-Encoding") is None, "event stream not coded")
    finally:
        c.close()


def test_etag_304_per_coding():
    rev = ok_json("/v1/plan")["revision"]
    for path in ("/v1/plan/routes", "/v1/plan/loads", "/v1/plan", "/v1/plan/routes?limit=3"):
        for coding, tag in ((None, '"%d"' % rev), ("gzip", '"%d-gzip"' % rev),
                            ("deflate", '"%d-deflate"' % rev)):
            ae = None if coding is None else coding + ", identity;q=0"
            r = get(path, accept_encoding=ae)
            check(header(r, "ETag") == tag, "%s %s: ETag %r" % (path, coding, header(r, "ETag")))
            r = get(path, accept_encoding=ae, inm=tag)
            check(r.status == 304 and r.body == b"", "%s %s: 304, got %d" % (path, coding, r.status))
            check(header(r, "ETag") == tag, "304 names the tag")
            check(header(r, "Vary") == "Accept-Encoding", "304 varies as the 200 (RFC 9110, 15.4.5)")
            # The tag of another representation does not match.
            other = '"%d-gzip"' % rev if coding is None else '"%d"' % rev
            r = get(path, accept_encoding=ae, inm=other)
            check(r.status == 200, "%s %s with %s: %d" % (path, coding, other, r.status))
            r = get(path, accept_encoding=ae, inm='W/%s, "x"' % tag)
            check(r.status == 304, "weak comparison in a list (13.1.2)")


# ---------------------------------------------------------------------------
# The large plan: 9,900 demands on 754 nodes


def rss_kb(pid):
    with open("/proc/%d/status" % pid) as f:
        for line in f:
            if line.startswith("VmRSS:"):
                return int(line.split()[1])
    return -1


def test_large_plan_paged_and_compressed():
    inst, plan = load(LARGE_SITES, "cost")
    check(len(inst["demands"]) == LARGE_SITES * (LARGE_SITES - 1), "9,900 demands")
    ident = get("/v1/plan/routes")
    check(ident.status == 200, "routes: %d" % ident.status)
    whole = json.loads(ident.body)
    check(len(whole["routes"]) == len(inst["demands"]), "%d routes" % len(whole["routes"]))
    gz = get("/v1/plan/routes", accept_encoding="gzip")
    df = get("/v1/plan/routes", accept_encoding="deflate")
    # Python's gzip module (RFC 1952) and zlib module (RFC 1950).
    check(gzip.decompress(gz.body) == ident.body, "gzip routes decode to identity")
    check(zlib.decompress(df.body) == ident.body, "deflate routes decode to identity")
    check(len(gz.body) < len(ident.body) // 4, "gzip shrinks JSON routes: %d of %d"
          % (len(gz.body), len(ident.body)))
    entries, pages, revs = walk("/v1/plan/routes", 1000, "routes", accept_encoding="gzip")
    check(pages == 10 and entries == whole["routes"], "10 gzip pages of 1000 equal the whole")
    check(revs == {whole["revision"]}, "one revision")
    # A link filter over the large plan, against Python's filter.
    used = {}
    for d in whole["routes"]:
        for p in d["paths"]:
            for l in p["links"]:
                used[l] = used.get(l, 0) + 1
    link = max(sorted(used), key=lambda l: used[l])
    want = [d for d in whole["routes"] if uses(d, link)]
    got, _, _ = walk("/v1/plan/routes", 250, "routes", "link=" + urllib.parse.quote(link),
                     accept_encoding="deflate")
    check(got == want, "link %s: %d routes, Python's filter %d" % (link, len(got), len(want)))
    lz = get("/v1/plan/loads", accept_encoding="gzip")
    li = get("/v1/plan/loads")
    check(gzip.decompress(lz.body) == li.body, "gzip loads decode to identity")
    print("# large plan: %d demands, %d paths; routes %d bytes identity, %d gzip, %d deflate; "
          "loads %d identity, %d gzip; daemon VmRSS %d kB"
          % (len(whole["routes"]), sum(len(d["paths"]) for d in whole["routes"]),
             len(ident.body), len(gz.body), len(df.body), len(li.body), len(lz.body),
             rss_kb(D.proc.pid)))


# ---------------------------------------------------------------------------

def main():
    global D, SMALL
    order = cases.select(globals(), sys.argv[1:])
    D = Daemon()
    try:
        SMALL, _ = load(SMALL_SITES, "balance")
    except BaseException:
        D.stop()
        raise
    return cases.finish(order, cases.run_then_stop(D, globals(), order, CASE_TIMEOUT_S))


if __name__ == "__main__":
    sys.exit(main())
