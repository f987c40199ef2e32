#!/usr/bin/env python3
"""The include graph of Plumbline's libraries, checked against the one that
DEVELOPERS.md draws.

DEVELOPERS.md holds the allowed graph between the markers
`<!-- include-graph: begin -->` and `<!-- include-graph: end -->`, one line a
library:

    daemon/ledger : daemon/util scorer [sqlite]

meaning: files under daemon/ledger/ may include headers of daemon/util/ and
scorer/ (and their own), and the external library `sqlite` (sqlite3.h).
Externals are: proto (generated messages, plumbline/v1/*.pb.h), grpc_stubs
(plumbline/v1/*.grpc.pb.h), grpc (grpcpp/, grpc/), sqlite (sqlite3.h),
prometheus (prometheus/), openssl (openssl/), civetweb (civetweb.h,
CivetServer.h), libpq (libpq-fe.h). Anything else (Abseil, Eigen,
protobuf's own headers, the C++ library) is allowed everywhere.

check_tree(root) returns every violation:
  - an #include of a project library the graph does not allow (upward or
    sideways), or of an external library the library may not use;
  - a library the graph does not know (a new folder must be drawn first);
  - a cycle in the graph itself;
  - a library whose CMake link dependencies (daemon/<part>/CMakeLists.txt)
    name a plumbline_ target its graph line does not allow;
  - an external that a library in NO_EXTERNAL reaches through its
    dependencies (plumbctl must link neither SQLite nor prometheus-cpp).

Usage: include_graph.py ROOT   (prints violations, exits 1 if any)
"""
import os
import re
import sys

EXTERNALS = {
    "proto": re.compile(r"^plumbline/v1/\w+\.pb\.h$"),
    "grpc_stubs": re.compile(r"^plumbline/v1/\w+\.grpc\.pb\.h$"),
    "grpc": re.compile(r"^grpcpp?/"),
    "sqlite": re.compile(r"^sqlite3\.h$"),
    "prometheus": re.compile(r"^prometheus/"),
    "openssl": re.compile(r"^openssl/"),
    "civetweb": re.compile(r"^(civetweb|CivetServer)\.h$"),
    "libpq": re.compile(r"^(libpq-fe|libpq/.*|pg_config.*)\.h$"),
}
# Libraries whose whole dependency closure must stay free of these.
NO_EXTERNAL = {"daemon/cli": {"sqlite", "prometheus", "civetweb", "libpq"},
               "scorer": {"sqlite", "prometheus", "grpc", "grpc_stubs",
                          "libpq"},
               "monitor": {"sqlite", "prometheus", "grpc", "grpc_stubs",
                           "libpq"}}
INCLUDE = re.compile(r'^\s*#\s*include\s*[<"]([^>"]+)[>"]', re.M)
SOURCE = (".h", ".cc")


def parse_graph(developers_md_text):
    """{library: (set of allowed libraries, set of allowed externals)}."""
    m = re.search(r"<!-- include-graph: begin -->(.*?)<!-- include-graph: end -->",
                  developers_md_text, re.S)
    if not m:
        raise ValueError("DEVELOPERS.md: no include-graph block")
    graph = {}
    for line in m.group(1).splitlines():
        line = line.strip()
        if not line or line.startswith(("```", "#")):
            continue
        name, _, rest = line.partition(":")
        externals = set(re.findall(r"\[(\w+)\]", rest))
        libs = set(re.sub(r"\[\w+\]", "", rest).split())
        graph[name.strip()] = (libs, externals)
    return graph


def library_of(path, graph):
    """The graph's library a source path belongs to (longest prefix)."""
    best = None
    for lib in graph:
        if path == lib or path.startswith(lib + "/"):
            if best is None or len(lib) > len(best):
                best = lib
    return best


def closure(lib, graph):
    seen, todo = set(), [lib]
    while todo:
        cur = todo.pop()
        for dep in graph.get(cur, (set(), set()))[0]:
            if dep not in seen:
                seen.add(dep)
                todo.append(dep)
    return seen


def cycles(graph):
    return sorted(lib for lib in graph if lib in closure(lib, graph))


def cmake_links(root):
    """{daemon/<part>: set of daemon/<part> libraries it links}."""
    out = {}
    daemon = os.path.join(root, "daemon")
    for part in sorted(os.listdir(daemon)):
        cm = os.path.join(daemon, part, "CMakeLists.txt")
        if not os.path.isfile(cm):
            continue
        text = open(cm, encoding="utf-8").read()
        m = re.search(r"plumbline_daemon_library\(\s*(\w+)(.*?)\)", text, re.S)
        if not m:
            continue
        links = set()
        for target in re.findall(r"\bplumbline_(\w+)", m.group(2)):
            if target in ("scorer", "monitor"):
                links.add(target)
            elif target in ("proto", "grpc"):
                continue
            else:
                links.add("daemon/" + target)
        out["daemon/" + m.group(1)] = links
    return out


def check_tree(root, developers_md=None):
    if developers_md is None:
        developers_md = os.path.join(root, "DEVELOPERS.md")
    graph = parse_graph(open(developers_md, encoding="utf-8").read())
    problems = []
    for lib in cycles(graph):
        problems.append(f"graph: {lib} depends on itself through a cycle")
    for lib, banned in NO_EXTERNAL.items():
        reach = {lib} | closure(lib, graph)
        for dep in sorted(reach):
            bad = graph.get(dep, (set(), set()))[1] & banned
            if bad:
                problems.append(f"graph: {lib} reaches {', '.join(sorted(bad))} "
                                f"through {dep}")
    for top in ("scorer", "monitor", "daemon"):
        base = os.path.join(root, top)
        for dirpath, _, files in os.walk(base):
            for name in sorted(files):
                if not name.endswith(SOURCE):
                    continue
                full = os.path.join(dirpath, name)
                rel = os.path.relpath(full, root)
                lib = library_of(rel, graph)
                if lib is None:
                    problems.append(f"{rel}: in no library of the graph "
                                    "(draw it in DEVELOPERS.md first)")
                    continue
                allowed, externals = graph[lib]
                text = open(full, encoding="utf-8").read()
                for inc in INCLUDE.findall(text):
                    target = library_of(inc, graph)
                    if target is not None:
                        if target != lib and target not in allowed:
                            problems.append(f"{rel}: includes {inc}: "
                                            f"{lib} may not depend on {target}")
                        continue
                    for ext, pattern in EXTERNALS.items():
                        if pattern.search(inc) and ext not in externals:
                            problems.append(f"{rel}: includes {inc}: "
                                            f"{lib} may not use {ext}")
    for lib, links in sorted(cmake_links(root).items()):
        if lib not in graph:
            problems.append(f"{lib}/CMakeLists.txt: library not in the graph")
            continue
        for dep in sorted(links - graph[lib][0]):
            problems.append(f"{lib}/CMakeLists.txt: links {dep}, "
                            "which the graph does not allow")
    return problems


def main(argv):
    if len(argv) != 2:
        sys.exit("usage: include_graph.py ROOT")
    problems = check_tree(argv[1])
    for p in problems:
        print(p)
    return 1 if problems else 0


if __name__ == "__main__":
    sys.exit(main(sys.argv))
