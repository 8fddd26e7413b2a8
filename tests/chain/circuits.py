"""Circuits of the chain tests (scenarios of the project's own), written so
they read the same in both spellings of the language: ideal sources, no let."""

# A greenhouse vent controller: one thermistor divider feeds two buffered
# channels (a branch) whose outputs meet again in a summing divider (a merge).
BRANCHES = """title "Vent controller: one sensor, two channels, one mixer"
ground gnd
voltage  v_sup  gnd -> v5   5 V
resistor r_a    v5 -> s     10k
ntc      th     s -> gnd    r25=10k beta=3950
port     p_s1   s -> b1_in
port     p_s2   s -> b2_in
opamp    u_a    plus=b1_in minus=b1_out out=b1_out
opamp    u_b    plus=b2_in minus=b2_out out=b2_out
port     p_m1   b1_out -> m1
port     p_m2   b2_out -> m2
resistor r_m1   m1 -> mix   10k
resistor r_m2   m2 -> mix   10k
resistor r_mg   mix -> gnd  10k
"""

# A rain gauge's reed-switch divider read through a stiff divider: the second
# connection fails the ratio rule by far (zin/zout = 1).
FAILING = """title "Rain gauge <sense> & 'count' front end"
ground gnd
voltage  v_ref  gnd -> vr   3.3 V
resistor r_up   vr -> tip   100k
resistor r_dn   tip -> gnd  100k
port     p_tip  tip -> div
resistor r_l1   div -> gnd  100k
port     p_log  div -> log_in
resistor r_in   log_in -> gnd 1M
expect tip > 1 V
"""

# Two stages that feed each other through ports (a loop through ports).
LOOP = """title "Loop through ports"
ground gnd
voltage  v1   gnd -> a   1 V
resistor r1   a -> x     1k
resistor r2   x -> gnd   1k
port     p_f  x -> y
resistor r3   y -> z     1k
resistor r4   z -> gnd   1k
port     p_b  z -> w
resistor r5   w -> x     1k
"""


def long_chain(n):
    """n stages in a row: a divider each, joined by ports (a long chain)."""
    lines = ['title "Forty-stage ladder"', "ground gnd", "voltage vs gnd -> top 10 V",
             "resistor r_in top -> n0 1k", "resistor r_g0 n0 -> gnd 100k"]
    for i in range(1, n):
        lines += [f"port p{i} n{i - 1} -> m{i}", f"resistor r_s{i} m{i} -> n{i} 1k",
                  f"resistor r_g{i} n{i} -> gnd 100k"]
    return "\n".join(lines) + "\n"
