#!/usr/bin/python3
"""check_layers.py - the layer rule of the source tree, checked from its includes.

Reads every `#include "NAME"` in src/ and closures/ (C, C++ and headers),
resolves NAME by its bare file name (each folder is on the include path, so a
header name is unique in the tree) and gives every file its layer from its
folder:

    base < files < numerics < model < experiments < cli

closures/ sits at the model layer; src/twingyre.h, the installed umbrella
header, sits at the highest layer of the headers it gathers. An include that
points up the layers fails the check unless the include line, or the comment
that ends on the line above it, gives the reason after the marker
`layer-exception:`, e.g.

    /* layer-exception: the registry lists the schemes it runs */
    #include "schemes.h"

Include cycles between units (a .c file and its same-named header are one
unit; a file including a header of its own unit is never up the layers)
fail too. Also printed, as information: the number of units, of
dependency levels (the longest chain of units each including the next, a
cycle counted as one unit) and of include edges between units.

Usage: check_layers.py [TOP]   TOP: the source tree (default $TG_SRCDIR, else
the tree this script sits in). Exit status 0 when the rule holds, 1 when it
does not, 99 when the tree cannot be read (automake's hard error).

Part of twingyre. GPL-3.0-or-later.
"""

import os
import re
import sys

LAYERS = ["base", "files", "numerics", "model", "experiments", "cli"]
CLOSURES_LAYER = "model"
UMBRELLA = "src/twingyre.h"
SOURCE_SUFFIXES = (".c", ".h", ".cpp", ".hpp", ".cc")

INCLUDE_RE = re.compile(r'^\s*#\s*include\s+"([^"]+)"')
EXCEPTION_RE = re.compile(r"layer-exception:\s*\w")


def layer_of(rel):
    """Layer index of a file (path relative to TOP), or None if it has none."""
    parts = rel.split("/")
    if rel == UMBRELLA:
        return 0  # raised to what it gathers (umbrella_layer)
    if parts[0] == "closures":
        return LAYERS.index(CLOSURES_LAYER)
    if parts[0] == "src" and len(parts) > 2 and parts[1] in LAYERS:
        return LAYERS.index(parts[1])
    return None


def stem(rel):
    return os.path.splitext(rel)[0]


DECLARED_RE = re.compile(r"\b([A-Za-z_]\w*)\s*\(")
NOT_FUNCTIONS = {"if", "for", "while", "switch", "return", "sizeof", "defined"}


def declared_functions(text):
    """Names a header declares with an argument list (comments and
    preprocessor lines left out)."""
    text = re.sub(r"/\*.*?\*/", "", text, flags=re.S)
    text = re.sub(r"//[^\n]*|^\s*#[^\n]*", "", text, flags=re.M)
    return set(DECLARED_RE.findall(text)) - NOT_FUNCTIONS


def defines(text, name):
    """Whether a source file defines function name: a line starting in column
    0 that names it with an argument list and does not end in ';'."""
    return re.search(r"^[A-Za-z_].*\b%s\s*\([^;]*$" % re.escape(name), text, flags=re.M)


def units_of(top, files):
    """Unit of every file: a .c file and its same-named header are one unit
    (the path without suffix); a header without a same-named source file
    whose functions are all defined in one source file (ncio_util.h, the
    private half of ncio.c) joins that file's unit; any other header is a
    unit of its own."""
    unit = {rel: stem(rel) for rel in files}
    sources = [rel for rel in files if not rel.endswith((".h", ".hpp"))]
    stems = {stem(rel) for rel in sources}
    texts = {}
    for rel in files:
        if not rel.endswith((".h", ".hpp")) or stem(rel) in stems:
            continue
        with open(os.path.join(top, rel), encoding="utf-8") as f:
            names = declared_functions(f.read())
        if not names:
            continue
        for src in sources:
            if src not in texts:
                with open(os.path.join(top, src), encoding="utf-8") as f:
                    texts[src] = f.read()
            if all(defines(texts[src], name) for name in names):
                unit[rel] = stem(src)
                break
    return unit


def layer_name(index, rel):
    if rel == UMBRELLA:
        return "umbrella header at " + LAYERS[index]
    return LAYERS[index]


def umbrella_layer(files, headers, includes):
    """The umbrella header's layer: the highest of the headers it includes."""
    gathered = [files[headers[name]] for rel, _, name, _ in includes
                if rel == UMBRELLA and name in headers]
    return max(gathered, default=0)


def source_files(top):
    for root in ("src", "closures"):
        for dirpath, dirnames, filenames in os.walk(os.path.join(top, root)):
            dirnames.sort()
            for name in sorted(filenames):
                if name.endswith(SOURCE_SUFFIXES):
                    yield os.path.relpath(os.path.join(dirpath, name), top)


def comment_above(lines, i):
    """The text of the comment that ends on line i - 1 (0-based i), or ''."""
    j = i - 1
    if j < 0:
        return ""
    line = lines[j].strip()
    if line.startswith("//"):
        return line
    if not line.endswith("*/"):
        return ""
    block = [line]
    while "/*" not in lines[j] and j > 0:
        j -= 1
        block.append(lines[j])
    return "\n".join(reversed(block))


def read_tree(top):
    """Files, their layers, the header index and every include.

    Returns (files, headers, includes, problems): includes is a list of
    (file, line number, name, excused) and problems the files or names that
    break the layout itself."""
    files = {}
    headers = {}
    problems = []
    for rel in source_files(top):
        layer = layer_of(rel)
        if layer is None:
            problems.append("%s: not in a layer folder (%s)" % (rel, ", ".join(LAYERS)))
            continue
        files[rel] = layer
        if rel.endswith((".h", ".hpp")):
            name = os.path.basename(rel)
            if name in headers:
                problems.append("%s: the header name %s is also %s; bare names must be unique"
                                % (rel, name, headers[name]))
            headers[name] = rel
    includes = []
    for rel in files:
        with open(os.path.join(top, rel), encoding="utf-8") as f:
            lines = f.read().split("\n")
        for i, line in enumerate(lines):
            m = INCLUDE_RE.match(line)
            if not m:
                continue
            reason = line + "\n" + comment_above(lines, i)
            excused = bool(EXCEPTION_RE.search(reason))
            includes.append((rel, i + 1, m.group(1), excused))
    return files, headers, includes, problems


def strongly_connected(nodes, edges):
    """Tarjan's strongly connected components of the graph (iterative)."""
    index = {}
    low = {}
    on_stack = set()
    stack = []
    components = []
    counter = 0
    for root in nodes:
        if root in index:
            continue
        work = [(root, iter(sorted(edges.get(root, ()))))]
        index[root] = low[root] = counter
        counter += 1
        stack.append(root)
        on_stack.add(root)
        while work:
            node, successors = work[-1]
            advanced = False
            for nxt in successors:
                if nxt not in index:
                    index[nxt] = low[nxt] = counter
                    counter += 1
                    stack.append(nxt)
                    on_stack.add(nxt)
                    work.append((nxt, iter(sorted(edges.get(nxt, ())))))
                    advanced = True
                    break
                if nxt in on_stack:
                    low[node] = min(low[node], index[nxt])
            if advanced:
                continue
            work.pop()
            if work:
                parent = work[-1][0]
                low[parent] = min(low[parent], low[node])
            if low[node] == index[node]:
                component = []
                while True:
                    member = stack.pop()
                    on_stack.discard(member)
                    component.append(member)
                    if member == node:
                        break
                components.append(sorted(component))
    return components


def path_back(start, goal, members, edges):
    """A shortest path start -> ... -> goal inside one component (breadth first)."""
    previous = {start: None}
    queue = [start]
    for node in queue:
        if node == goal:
            path = [node]
            while previous[path[-1]] is not None:
                path.append(previous[path[-1]])
            return list(reversed(path))
        for nxt in sorted(edges.get(node, ())):
            if nxt in members and nxt not in previous:
                previous[nxt] = node
                queue.append(nxt)
    return None


def cycles_of(components, edges, rank):
    """The cycles to report: in every component of more than one unit, one
    shortest cycle through each include leaving its lowest-layer unit (the
    unit whose upward includes close the cycles)."""
    cycles = []
    for component in components:
        if len(component) < 2:
            continue
        members = set(component)
        root = min(component, key=lambda u: (rank[u], u))
        for nxt in sorted(edges.get(root, set()) & members):
            if nxt == root:
                continue
            cycles.append([root] + path_back(nxt, root, members, edges))
    return cycles


def levels(units, edges, components):
    """Number of dependency levels: the longest chain in the graph of components."""
    component_of = {}
    for k, component in enumerate(components):
        for unit in component:
            component_of[unit] = k
    depth = {}

    def depth_of(k):
        # Tarjan returns components dependencies first, so recursion is shallow.
        if k not in depth:
            below = [depth_of(component_of[v]) for u in components[k]
                     for v in edges.get(u, ()) if component_of[v] != k]
            depth[k] = 1 + max(below, default=0)
        return depth[k]

    return max((depth_of(k) for k in range(len(components))), default=0)


def main(argv):
    top = argv[1] if len(argv) > 1 else os.environ.get("TG_SRCDIR") or \
        os.path.normpath(os.path.join(os.path.dirname(os.path.abspath(__file__)), "..", ".."))
    if not os.path.isdir(os.path.join(top, "src")):
        print("check_layers: %s has no src/ folder" % top)
        return 99
    try:
        files, headers, includes, problems = read_tree(top)
    except (OSError, UnicodeDecodeError) as e:
        print("check_layers: cannot read the tree: %s" % e)
        return 99

    if UMBRELLA in files:
        files[UMBRELLA] = umbrella_layer(files, headers, includes)
    unit_of = units_of(top, files)
    units = sorted(set(unit_of.values()))
    edges = {}
    upward = []
    excused = []
    for rel, line, name, has_reason in includes:
        target = headers.get(name)
        if target is None:
            problems.append('%s:%d: #include "%s" names no header in src/ or closures/'
                            % (rel, line, name))
            continue
        if unit_of[target] == unit_of[rel]:
            continue
        edges.setdefault(unit_of[rel], set()).add(unit_of[target])
        if files[target] > files[rel]:
            where = "%s:%d: %s (%s) includes %s (%s, %s)" % (
                rel, line, os.path.basename(rel), layer_name(files[rel], rel),
                name, layer_name(files[target], target), target)
            (excused if has_reason else upward).append(where)

    components = strongly_connected(units, edges)
    rank = {}
    for rel, unit in unit_of.items():
        rank[unit] = min(rank.get(unit, files[rel]), files[rel])
    cycles = cycles_of(components, edges, rank)
    edge_count = sum(len(targets) for targets in edges.values())

    print("check_layers: %d units, %d levels, %d include edges between units "
          "(from %d include lines), %d upward includes (%d with a layer-exception), %d cycles"
          % (len(units), levels(units, edges, components), edge_count, len(includes),
             len(upward) + len(excused), len(excused), len(cycles)))
    print("layers, lowest first: %s; closures/ at %s" % (" < ".join(LAYERS), CLOSURES_LAYER))
    for where in excused:
        print("allowed (layer-exception): " + where)
    for problem in problems:
        print("layout: " + problem)
    for where in upward:
        print("UP THE LAYERS, no layer-exception comment: " + where)
    for cycle in cycles:
        print("CYCLE: " + " -> ".join(cycle))
    if problems or upward or cycles:
        print("check_layers: FAIL: %d upward includes without a reason, %d cycles, "
              "%d layout problems" % (len(upward), len(cycles), len(problems)))
        return 1
    print("check_layers: ok")
    return 0


if __name__ == "__main__":
    sys.exit(main(sys.argv))
