#!/usr/bin/python3
"""Extracts the Zachary karate club fixture used by KarateClubTest.

Source of the data: W. W. Zachary, "An information flow model for conflict and fission in small
groups", J. Anthropological Research 33(4), 1977, as carried by NetworkX's karate_club_graph()
(node attribute 'club'; Debian package python3-networkx).

Run with Debian's interpreter, where python3-networkx is installed:
    apt-get install -y python3-networkx
    /usr/bin/python3 extract_karate.py
It writes factions.csv (node,club) and ties.csv (u,v with u < v) next to this script.
"""
import os

import networkx as nx

HERE = os.path.dirname(os.path.abspath(__file__))
HEADER = (
    "# Zachary's karate club (Zachary 1977), extracted from NetworkX {v} karate_club_graph()\n"
    "# by extract_karate.py in this folder. NetworkX node numbers 0..33.\n"
)

g = nx.karate_club_graph()
assert g.number_of_nodes() == 34, g.number_of_nodes()
assert g.number_of_edges() == 78, g.number_of_edges()
assert sorted(g.nodes()) == list(range(34))

with open(os.path.join(HERE, "factions.csv"), "w") as f:
    f.write(HEADER.format(v=nx.__version__))
    f.write("node,club\n")
    for node in range(34):
        f.write("%d,%s\n" % (node, g.nodes[node]["club"]))

with open(os.path.join(HERE, "ties.csv"), "w") as f:
    f.write(HEADER.format(v=nx.__version__))
    f.write("u,v\n")
    for u, v in sorted((min(a, b), max(a, b)) for a, b in g.edges()):
        f.write("%d,%d\n" % (u, v))
