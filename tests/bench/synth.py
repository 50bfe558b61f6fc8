# SPDX-License-Identifier: GPL-3.0-or-later
"""The benchmark's synthetic case: the Kdl topology with invented numbers.

DESIGN.  tests/data/topologyzoo/Kdl.gml (Internet Topology Zoo, 754 nodes,
899 edges; tests/data/PROVENANCE.md) gives the graph and the node
coordinates, nothing else: the Zoo has no capacities for it and no traffic
matrices.  Everything numeric here is invented, from one seeded
random.Random, so the same seed gives the same instance on every machine:

  - capacity per link (both directions): 10, 40 or 100 Gbit/s with
    probabilities 0.5, 0.3, 0.2;
  - TE metric: the great-circle length of the link in km, rounded up, at
    least 1 (an invented 1..50 where a node has no coordinates);
  - traffic: a gravity model among `sites` nodes drawn from the largest
    connected component, every ordered pair of sites one demand with rate
    alpha * w_s * w_t, each site's weight w drawn log-normal(0, 1); alpha
    is chosen so that routing every demand on its shortest TE-metric path
    loads the busiest arc direction to `sp_load` (0.9) of its capacity.
    So the whole matrix fits (shortest-path routing is one feasible plan)
    and the balance optimum lies below 0.9.

Self-loops in the GML are dropped; parallel edges (the file has some) stay
parallel links.  The number of sites sets the size of the node-arc LP
(sites x 2 x links flow columns, sites x nodes conservation rows).  The
default is 30 sites (870 demands; 53,940 flow columns, 22,620 rows): each
weft solve takes seconds, so the 40+ re-solves of the incremental part fit
in minutes.  120 sites (14,280 demands, close to brain.txt's 14,311) gives
a node-arc LP that CLP solves in about 45 s and weft's node-arc solve in
about 110 s on the shared 2-core machine: run.py --sites 120 for that.

Usage: synth.py [--sites N] [--seed S] [--out FILE] [--sndlib FILE]
(prints a summary; --out FILE gets {"topology": ..., "demands": ...} as
weft's API takes them, --sndlib FILE the same network in the SNDlib native
format, rates in Mbit/s, the TE metric as routing cost, for engine_bench).
"""
import heapq
import json
import math
import os
import random
import re
import sys

HERE = os.path.dirname(os.path.abspath(__file__))
ROOT = os.path.dirname(os.path.dirname(HERE))
KDL = os.path.join(ROOT, "tests", "data", "topologyzoo", "Kdl.gml")
SEED = 20240611
SITES = 30
SP_LOAD = 0.9
CAPS = ((10e9, 0.5), (40e9, 0.3), (100e9, 0.2))

_TOKEN = re.compile(r'\s*(?:(\[)|(\])|"([^"]*)"|([^\s\[\]"]+))')


def parse_gml(path):
    """A small reader of the GML subset the Zoo writes: returns (nodes,
    edges), each a list of dicts of the keys of one node [...] or edge
    [...] block.  Nested blocks other than those two are skipped."""
    with open(path, encoding="utf-8") as f:
        text = f.read()
    toks = []
    pos = 0
    while pos < len(text):
        m = _TOKEN.match(text, pos)
        if m is None or m.end() == pos:
            if text[pos:].strip() == "":
                break
            raise ValueError("GML: cannot read at offset %d" % pos)
        pos = m.end()
        if m.group(1):
            toks.append(("[", None))
        elif m.group(2):
            toks.append(("]", None))
        elif m.group(3) is not None:
            toks.append(("s", m.group(3)))
        else:
            toks.append(("w", m.group(4)))
    nodes, edges = [], []
    stack = []              # (key, dict) of the open blocks
    i = 0
    while i < len(toks):
        kind, val = toks[i]
        if kind == "]":
            key, d = stack.pop()
            if key == "node" and len(stack) == 1:
                nodes.append(d)
            elif key == "edge" and len(stack) == 1:
                edges.append(d)
            i += 1
            continue
        if kind != "w" or i + 1 >= len(toks):
            raise ValueError("GML: key expected at token %d" % i)
        nkind, nval = toks[i + 1]
        if nkind == "[":
            stack.append((val, {}))
        elif stack:
            if nkind == "s":
                v = nval
            else:
                try:
                    v = int(nval)
                except ValueError:
                    v = float(nval)
            stack[-1][1][val] = v
        i += 2
    return nodes, edges


def _km(a, b):
    """Great-circle distance in km (haversine, R = 6371 km)."""
    la1, lo1, la2, lo2 = map(math.radians, (a[0], a[1], b[0], b[1]))
    h = math.sin((la2 - la1) / 2) ** 2 + math.cos(la1) * math.cos(la2) * math.sin((lo2 - lo1) / 2) ** 2
    return 2 * 6371.0 * math.asin(min(1.0, math.sqrt(h)))


def _components(ids, adj):
    seen, comps = set(), []
    for v in ids:
        if v in seen:
            continue
        comp, todo = [], [v]
        seen.add(v)
        while todo:
            x = todo.pop()
            comp.append(x)
            for y, _, _ in adj[x]:
                if y not in seen:
                    seen.add(y)
                    todo.append(y)
        comps.append(comp)
    return comps


def _sp_tree(src, adj):
    """Dijkstra from src: {node: (dist, predecessor, link index)}."""
    best = {src: (0.0, None, None)}
    heap = [(0.0, src)]
    done = set()
    while heap:
        dist, v = heapq.heappop(heap)
        if v in done:
            continue
        done.add(v)
        for y, w, li in adj[v]:
            nd = dist + w
            if y not in best or nd < best[y][0]:
                best[y] = (nd, v, li)
                heapq.heappush(heap, (nd, y))
    return best


def build(sites=SITES, seed=SEED, path=KDL, sp_load=SP_LOAD):
    """Returns {"topology", "demands", "info"} for the synthetic case."""
    rng = random.Random(seed)
    gnodes, gedges = parse_gml(path)
    nodes = []
    coord = {}
    for n in gnodes:
        nid = "k%03d" % int(n["id"])
        node = {"id": nid}
        if isinstance(n.get("label"), str) and n["label"]:
            node["name"] = n["label"][:256]
        lat, lon = n.get("Latitude"), n.get("Longitude")
        if isinstance(lat, (int, float)) and isinstance(lon, (int, float)) \
                and -90 <= lat <= 90 and -180 <= lon <= 180:
            node["lat"], node["lon"] = float(lat), float(lon)
            coord[nid] = (float(lat), float(lon))
        nodes.append(node)
    ids = [n["id"] for n in nodes]
    links = []
    loops = 0
    for e in gedges:
        a, b = "k%03d" % int(e["source"]), "k%03d" % int(e["target"])
        if a == b:
            loops += 1
            continue
        r = rng.random()
        acc = 0.0
        cap = CAPS[-1][0]
        for c, p in CAPS:
            acc += p
            if r < acc:
                cap = c
                break
        if a in coord and b in coord:
            metric = max(1, math.ceil(_km(coord[a], coord[b])))
        else:
            metric = rng.randint(1, 50)
        links.append({"id": "kl%03d" % len(links), "a": a, "b": b, "capacity_bps": cap,
                      "te_metric": metric, "state": "up"})
    adj = {v: [] for v in ids}
    for i, l in enumerate(links):
        adj[l["a"]].append((l["b"], l["te_metric"], i))
        adj[l["b"]].append((l["a"], l["te_metric"], i))
    comps = sorted(_components(ids, adj), key=len, reverse=True)
    big = sorted(comps[0])
    if sites > len(big):
        raise ValueError("%d sites asked, the largest component has %d nodes" % (sites, len(big)))
    chosen = sorted(rng.sample(big, sites))
    weight = {v: rng.lognormvariate(0.0, 1.0) for v in chosen}
    pairs = [(s, t) for s in chosen for t in chosen if s != t]
    # Loads of shortest-path routing at alpha = 1, per (link, direction).
    load = {}
    for s in chosen:
        tree = _sp_tree(s, adj)
        for t in chosen:
            if t == s:
                continue
            rate = weight[s] * weight[t]
            v = t
            while v != s:
                _, pred, li = tree[v]
                key = (li, links[li]["a"] == pred)
                load[key] = load.get(key, 0.0) + rate
                v = pred
    worst = max(load[k] / links[k[0]]["capacity_bps"] for k in load)
    alpha = sp_load / worst
    demands = [{"src": s, "dst": t, "rate_bps": round(alpha * weight[s] * weight[t], 3),
                "priority": 0} for s, t in pairs]
    info = {"seed": seed, "sites": sites, "nodes": len(nodes), "links": len(links),
            "demands": len(demands), "self_loops_dropped": loops,
            "components": len(comps), "largest_component": len(big),
            "total_bps": sum(d["rate_bps"] for d in demands),
            "shortest_path_max_utilization": sp_load}
    return {"topology": {"nodes": nodes, "links": links}, "demands": demands, "info": info}


def write_sndlib(inst, path):
    """inst in the SNDlib native format (weft's importer reads it back:
    pre-installed capacity and routing cost per link, one demand line per
    demand; rates in Mbit/s with 12 significant digits)."""
    topo = inst["topology"]
    with open(path, "w") as f:
        f.write("?SNDlib native format; type: network; version: 1.0\n")
        f.write("# invented data: tests/bench/synth.py seed %d, %d sites\n"
                % (inst["info"]["seed"], inst["info"]["sites"]))
        f.write("META (\n  unit = MBITPERSEC\n)\nNODES (\n")
        for n in topo["nodes"]:
            f.write("  %s ( %.6f %.6f )\n" % (n["id"], n.get("lon", 0.0), n.get("lat", 0.0)))
        f.write(")\nLINKS (\n")
        for l in topo["links"]:
            f.write("  %s ( %s %s ) %.12g 0 %d 0 ( )\n"
                    % (l["id"], l["a"], l["b"], l["capacity_bps"] / 1e6, l["te_metric"]))
        f.write(")\nDEMANDS (\n")
        for i, d in enumerate(inst["demands"]):
            f.write("  d%d ( %s %s ) 1 %.12g UNLIMITED\n"
                    % (i, d["src"], d["dst"], d["rate_bps"] / 1e6))
        f.write(")\n")


def main(argv):
    sites, seed, out, native = SITES, SEED, None, None
    i = 0
    while i < len(argv):
        if argv[i] == "--sites":
            sites = int(argv[i + 1])
        elif argv[i] == "--seed":
            seed = int(argv[i + 1])
        elif argv[i] == "--out":
            out = argv[i + 1]
        elif argv[i] == "--sndlib":
            native = argv[i + 1]
        else:
            print(__doc__.strip().split("Usage: ")[1].split("\n(")[0])
            return 2
        i += 2
    inst = build(sites, seed)
    print(json.dumps(inst["info"], indent=1))
    if out:
        with open(out, "w") as f:
            json.dump({"topology": inst["topology"], "demands": inst["demands"]}, f)
    if native:
        write_sndlib(inst, native)
    return 0


if __name__ == "__main__":
    sys.exit(main(sys.argv[1:]))
