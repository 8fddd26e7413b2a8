"""The stage partition and its signal order.

1. The example circuits against hand-made expectations: each circuit file was
   read by hand and cut into stages by the rule of docs/chain.md (the pieces
   left connected when every port is opened; ground and supply rails do not
   join pieces), named and ordered by that rule.
2. Random circuits against networkx (Debian's python3-networkx): the stages
   must be exactly the connected components of the graph of parts with the
   ports, ground and the rail removed, and the signal order a topological
   order of the port graph (networkx.is_directed_acyclic_graph /
   topological_generations give the reference).
"""
import os
import random
import sys

sys.path.insert(0, os.path.dirname(__file__))
from chainlib import CIRCUITS, check, circuit, finish, run_json  # noqa: E402
import circuits  # noqa: E402

# name -> [(stage, named_by, parts, has)], [(port, from, to)], rails
HAND = {
    "bench_monitor.stack": (
        [("sense", "instance", ["sense.top", "sense.bot"], []),
         ("buf", "instance", ["buf.u"], ["opamp"]),
         ("r_adc", "first part", ["r_adc"], [])],
        [("p_tap", 0, 1), ("p_buf", 1, 2)], ["rail"]),
    "tank_level.stack": (
        [("sense", "driver node", ["r_pullup", "r_sender"], []),
         ("d_adc", "instance", ["d_adc.top", "d_adc.bot"], []),
         ("r_adcin", "first part", ["r_adcin"], [])],
        [("p_sense", 0, 1), ("p_adc", 1, 2)], ["v12"]),
    "photodiode_tia.stack": (
        [("pd", "driver node", ["diode", "r_shunt"], ["sensor"]),
         ("u1", "first part", ["u1", "r_f", "r_load"], ["opamp"])],
        [("p_pd", 0, 1)], []),
    "strain_bridge.stack": (
        [("r1", "first part", ["r1", "r2", "r3", "r4", "amp", "rload"], [])], [], ["exc"]),
    "ebike_pack_monitor.stack": (
        [("r_drop", "first part", ["r_drop", "z5", "r_bias", "th_pack", "u_temp", "r_fb", "r_g", "a_temp", "s_led",
                                   "r_led", "d_stat"], ["opamp", "adc", "sensor"]),
         ("r_top", "first part", ["r_top", "r_bot", "a_pack"], ["adc"])], [], ["vpack"]),
}

OWN = {
    "branches": (circuits.BRANCHES,
                 [("s", "driver node", ["r_a", "th"], ["sensor"]),
                  ("b1_out", "driver node", ["u_a"], ["opamp"]),
                  ("b2_out", "driver node", ["u_b"], ["opamp"]),
                  ("r_m1", "first part", ["r_m1", "r_m2", "r_mg"], [])],
                 [("p_s1", 0, 1), ("p_s2", 0, 2), ("p_m1", 1, 3), ("p_m2", 2, 3)], ["v5"], False),
    "loop": (circuits.LOOP,
             [("x", "driver node", ["r1", "r2", "r5"], []), ("z", "driver node", ["r3", "r4"], [])],
             [("p_f", 0, 1), ("p_b", 1, 0)], ["a"], True),
}


def compare(what, j, stages, conns, rails):
    got = [(s["name"], s["named_by"], s["parts"], s["has"]) for s in j.get("stages", [])]
    check(got == [tuple(s) for s in stages], f"{what}: stages\n  got  {got}\n  want {stages}")
    gotc = [(c["port"], c["from_stage"], c["to_stage"]) for c in j.get("connections", [])]
    check(gotc == conns, f"{what}: connections {gotc} != {conns}")
    check([r["node"] for r in j.get("rails", [])] == rails, f"{what}: rails {j.get('rails')} != {rails}")


def hand_cases():
    for name, (stages, conns, rails) in HAND.items():
        compare(name, run_json(["chain", os.path.join(CIRCUITS, name)]), stages, conns, rails)
    for name, (text, stages, conns, rails, loop) in OWN.items():
        j = run_json(["chain", circuit(name + ".stack", text)])
        compare(name, j, stages, conns, rails)
        check(j.get("loop") is loop, f"{name}: loop is {j.get('loop')}, expected {loop}")


def random_circuit(rng, k):
    """A random chain: pieces of resistors, some on the rail, joined by ports
    that form a DAG (each port from an earlier piece to a later one)."""
    npieces = rng.randint(2, 9)
    lines = [f'title "random {k}"', "ground gnd", "voltage vs gnd -> rail 5 V"]
    pieces, parts, ports = [], [], []
    for p in range(npieces):
        nodes = [f"q{p}_{i}" for i in range(rng.randint(1, 4))]
        pieces.append(nodes)
        lines.append(f"resistor rg{p} {nodes[0]} -> gnd {rng.randint(1, 99)}k")
        parts.append((f"rg{p}", [nodes[0]]))
        for i in range(1, len(nodes)):
            a = rng.choice(nodes[:i])
            lines.append(f"resistor r{p}_{i} {a} -> {nodes[i]} {rng.randint(1, 99)}k")
            parts.append((f"r{p}_{i}", [a, nodes[i]]))
        if rng.random() < 0.5:
            lines.append(f"resistor rr{p} rail -> {rng.choice(nodes)} {rng.randint(10, 99)}k")
            parts.append((f"rr{p}", [nodes[0]]))
    # ports: every piece after the first is fed by one or two earlier pieces
    order = list(range(npieces))
    rng.shuffle(order)
    for j in range(1, npieces):
        for src in rng.sample(order[:j], min(j, rng.choice([1, 1, 2]))):
            name = f"p{len(ports)}"
            new = f"in{len(ports)}"
            lines.append(f"port {name} {rng.choice(pieces[src])} -> {new}")
            lines.append(f"resistor rin{len(ports)} {new} -> {rng.choice(pieces[order[j]])} {rng.randint(1, 99)}k")
            parts.append((f"rin{len(ports)}", [new]))
            pieces[order[j]].append(new)
            ports.append((name, src, order[j]))
    return "\n".join(lines) + "\n", pieces, parts, ports


def networkx_cases():
    import networkx as nx
    rng = random.Random(17)
    for k in range(12):
        text, pieces, parts, ports = random_circuit(rng, k)
        j = run_json(["chain", circuit(f"random{k}.stack", text)])
        # reference: connected components of the part graph without ports, ground and rail
        g = nx.Graph()
        for nodes in pieces:
            g.add_nodes_from(nodes)
        for line in text.splitlines():
            w = line.split()
            if w and w[0] == "resistor":
                ends = [n for n in (w[2], w[4]) if n not in ("gnd", "rail")]
                if len(ends) == 2:
                    g.add_edge(*ends)
                elif ends:
                    g.add_node(ends[0])
        comps = {frozenset(c) for c in nx.connected_components(g)}
        node_of_part = {}
        for line in text.splitlines():
            w = line.split()
            if w and w[0] == "resistor":
                node_of_part[w[1]] = next(n for n in (w[2], w[4]) if n not in ("gnd", "rail"))
        got = set()
        for s in j.get("stages", []):
            nodes = set()
            for p in s["parts"]:
                nodes |= nx.node_connected_component(g, node_of_part[p])
            got.add(frozenset(nodes))
            check(all(frozenset(nx.node_connected_component(g, node_of_part[p])) == frozenset(nodes)
                      for p in s["parts"]), f"random {k}: stage {s['name']} mixes components")
        check(got == comps, f"random {k}: {len(got)} stages, networkx finds {len(comps)} components")
        # every part (but the rail source) in exactly one stage
        listed = sorted(p for s in j.get("stages", []) for p in s["parts"])
        check(listed == sorted(node_of_part), f"random {k}: parts listed {len(listed)} != {len(node_of_part)}")
        # signal order: a topological order of the stage graph
        dg = nx.DiGraph()
        dg.add_nodes_from(range(len(j.get("stages", []))))
        for c in j.get("connections", []):
            if c["from_stage"] != c["to_stage"]:
                dg.add_edge(c["from_stage"], c["to_stage"])
        check(nx.is_directed_acyclic_graph(dg), f"random {k}: the port graph should have no loop")
        check(all(a < b for a, b in dg.edges), f"random {k}: a connection runs against the signal order")
        check(j.get("loop") is False, f"random {k}: loop reported on an acyclic chain")
        check(len(j.get("connections", [])) == len(ports), f"random {k}: connections != ports")


hand_cases()
networkx_cases()
finish("chain-stages")
