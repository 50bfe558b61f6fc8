# SPDX-License-Identifier: GPL-3.0-or-later
"""An independent reader of SNDlib native network files, for the tests.

The reference checks must not trust weft's own parser, so this module reads
the files again, in Python, straight from the published format description
(Orlowski, Wessaely, Pioro, Tomaszewski, "SNDlib 1.0", Networks 55(3), 2010):
a file is a sequence of sections NAME ( ... ), one record per line, '#'
starts a comment.  Only META, NODES, LINKS and DEMANDS are interpreted;
other sections (ADMISSIBLE_PATHS) are skipped.

It applies weft's documented import conventions, restated here so that a
change on either side shows up as a failed check:

- each LINKS line is one full-duplex link: two arcs, each with the link's
  capacity;
- capacity = pre-installed capacity if positive, else the first module's
  capacity;
- TE metric = routing cost if positive, else 1;
- each DEMANDS line is directed traffic from source to target, of
  demand_value (the routing unit is ignored);
- rates are in the META unit (MBITPERSEC or BITSPERSEC), Mbit/s when the
  file names none; everything is returned in bit/s as well;
- parallel links stay separate links.
"""
import re

UNITS = {"MBITPERSEC": 1e6, "BITSPERSEC": 1.0, "KBITPERSEC": 1e3,
         "GBITPERSEC": 1e9}


class Link:
    def __init__(self, lid, a, b, pre_cap, routing_cost, modules, unit_bps):
        self.id = lid
        self.a = a
        self.b = b
        self.pre_cap = pre_cap          # file unit
        self.routing_cost = routing_cost
        self.modules = modules          # [(capacity, cost)] in file unit
        cap = pre_cap if pre_cap > 0 else (modules[0][0] if modules else 0.0)
        self.capacity = cap             # file unit
        self.capacity_bps = cap * unit_bps
        self.te_metric = routing_cost if routing_cost > 0 else 1.0

    def __repr__(self):
        return "Link(%s %s-%s %g bps metric %g)" % (self.id, self.a, self.b,
                                                   self.capacity_bps, self.te_metric)


class Demand:
    def __init__(self, did, src, dst, value, unit_bps):
        self.id = did
        self.src = src
        self.dst = dst
        self.value = value              # file unit
        self.rate_bps = value * unit_bps


class Network:
    """nodes: [name]; links: [Link]; demands: [Demand]; unit_bps: bit/s per file unit."""

    def __init__(self, name):
        self.name = name
        self.meta = {}
        self.nodes = []
        self.coords = {}
        self.links = []
        self.demands = []
        self.unit_bps = 1e6

    def __repr__(self):
        return "Network(%s: %d nodes, %d links, %d demands)" % (
            self.name, len(self.nodes), len(self.links), len(self.demands))


class ParseError(Exception):
    pass


def _sections(text):
    """Yields (section name, [(line number, record text)])."""
    name = None
    body = []
    depth = 0
    for no, raw in enumerate(text.splitlines(), 1):
        line = raw.split("#", 1)[0].strip()
        if line.startswith("?"):        # the "?SNDlib native format" banner
            continue
        if not line:
            continue
        if name is None:
            m = re.match(r"^([A-Z_]+)\s*\(\s*$", line)
            if m is None:
                raise ParseError("line %d: expected a section start, got %r" % (no, line))
            name = m.group(1)
            body = []
            depth = 1
            continue
        opens = line.count("(")
        closes = line.count(")")
        if depth == 1 and line == ")":
            yield name, body
            name = None
            continue
        depth += opens - closes
        if depth < 1:
            raise ParseError("line %d: unbalanced ')'" % no)
        body.append((no, line))
    if name is not None:
        raise ParseError("section %s is not closed" % name)


def _tokens(line):
    return line.replace("(", " ( ").replace(")", " ) ").split()


def parse(text, name="network"):
    net = Network(name)
    secs = {}
    for sname, body in _sections(text):
        if sname in secs:
            raise ParseError("section %s appears twice" % sname)
        secs[sname] = body
    for no, line in secs.get("META", []):
        k, _, v = line.partition("=")
        net.meta[k.strip()] = v.strip()
    unit = net.meta.get("unit")
    if unit:
        if unit not in UNITS:
            raise ParseError("unknown unit %r" % unit)
        net.unit_bps = UNITS[unit]
    for no, line in secs.get("NODES", []):
        t = _tokens(line)
        if len(t) not in (1, 5) or (len(t) == 5 and (t[1], t[4]) != ("(", ")")):
            raise ParseError("line %d: bad node record" % no)
        if t[0] in net.coords:
            raise ParseError("line %d: node %s twice" % (no, t[0]))
        net.nodes.append(t[0])
        net.coords[t[0]] = (float(t[2]), float(t[3])) if len(t) == 5 else None
    known = set(net.nodes)
    seen = set()
    for no, line in secs.get("LINKS", []):
        t = _tokens(line)
        # id ( a b ) pre_cap pre_cap_cost routing_cost setup_cost ( {cap cost}* )
        if len(t) < 11 or t[1] != "(" or t[4] != ")" or t[9] != "(" or t[-1] != ")":
            raise ParseError("line %d: bad link record" % no)
        mods = [float(x) for x in t[10:-1]]
        if len(mods) % 2:
            raise ParseError("line %d: odd module list" % no)
        if t[2] not in known or t[3] not in known:
            raise ParseError("line %d: unknown node" % no)
        if t[0] in seen:
            raise ParseError("line %d: link %s twice" % (no, t[0]))
        seen.add(t[0])
        net.links.append(Link(t[0], t[2], t[3], float(t[5]), float(t[7]),
                              list(zip(mods[0::2], mods[1::2])), net.unit_bps))
    seen = set()
    for no, line in secs.get("DEMANDS", []):
        t = _tokens(line)
        # id ( src dst ) routing_unit demand_value max_path_length
        if len(t) != 8 or t[1] != "(" or t[4] != ")":
            raise ParseError("line %d: bad demand record" % no)
        if t[2] not in known or t[3] not in known:
            raise ParseError("line %d: unknown node" % no)
        if t[0] in seen:
            raise ParseError("line %d: demand %s twice" % (no, t[0]))
        seen.add(t[0])
        net.demands.append(Demand(t[0], t[2], t[3], float(t[6]), net.unit_bps))
    return net


def load(path):
    import os
    with open(path, "r", encoding="utf-8") as f:
        text = f.read()
    return parse(text, os.path.splitext(os.path.basename(path))[0])
