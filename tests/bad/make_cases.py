#!/usr/bin/python3
# Writes tests/bad/cases/*.stack (run it from anywhere; it rewrites every
# case).  In each body the marker ⟦ stands where the first error must point,
# placed by hand from the language's rules; the header line
# "# expect: CODE FILE:LINE:COL" is worked out from it.  Cases whose error is
# in another file, or has no place in a file ("-"), give it explicitly.
# The files included by the include cases live in cases/inc/ (written by hand).
import os, sys
OUT = os.path.join(os.path.dirname(os.path.abspath(__file__)), "cases")
M = "\u27e6"
cases = []
def case(name, code, desc, body, args=None, where=None):
    cases.append((name, code, desc, body, args, where))

# ---------------- lexer ----------------
case("detached_prefix", 2, "an SI prefix apart from its number",
 "ground gnd\nvoltage v gnd -> a 5 V\nresistor r1 a -> gnd 2 ⟦k\n")
case("number_overflow", 2, "1e999 does not fit a double",
 "ground gnd\nvoltage v gnd -> a ⟦1e999\nresistor r a -> gnd 1k\n")
case("number_too_many_digits", 2, "a mantissa of 200 digits",
 "ground gnd\nresistor r gnd -> a ⟦" + "1" * 200 + "\n")
case("unknown_unit", 2, "a unit word loadstack does not know",
 "ground gnd\nresistor r gnd -> a 10⟦xyz\n")
case("capital_k_prefix", 2, "kilo written as K",
 "ground gnd\nresistor r gnd -> a 10⟦K\n")
case("malformed_number", 2, "digits glued to an identifier",
 "ground gnd\nresistor r gnd -> a ⟦12_3\n")
case("letter_code_with_prefix", 2, "an IEC 60062 code followed by another multiplier",
 "ground gnd\nresistor r gnd -> a 4k7⟦kohm\n")
case("unterminated_string", 2, "a title without its closing quote",
 "title ⟦\"Tank-level sender\nground gnd\n")
case("nul_byte", 2, "a NUL byte in the text",
 "ground gnd\nresistor r gnd -> a 1k ⟦\0\n")
case("single_pipe", 2, "'|' instead of '||'",
 "ground gnd\nresistor r gnd -> a 1k ⟦| 2k\n")
case("control_char", 2, "a stray control character",
 "ground gnd\nresistor r gnd -> a 1k ⟦\x01\n")
case("unexpected_char", 2, "a character outside the language",
 "ground gnd\nresistor r gnd -> a 1k ⟦$\n")
case("unexpected_utf8", 2, "a non-ASCII character outside the language",
 "ground gnd\nresistor r gnd -> a ⟦€5\n")
case("line_too_long", 2, "a line over 100000 bytes",
 "ground gnd\n⟦# " + "x" * 100005 + "\nresistor r gnd -> a 1k\n")

# ---------------- parser ----------------
case("unknown_kind_suggest", 2, "a misspelt part kind",
 "ground gnd\n⟦resistr r1 gnd -> a 1k\n")
case("unknown_kind", 2, "a part kind the language does not have",
 "ground gnd\n⟦flux_capacitor c1 gnd -> a 1\n")
case("missing_arrow", 2, "two nodes without '->'",
 "ground gnd\nresistor r1 ⟦a gnd 1k\n")
case("missing_part_name", 2, "the part name left out",
 "ground gnd\nresistor ⟦-> a 1k\n")
case("missing_to_node", 2, "a number where the TO node goes",
 "ground gnd\nresistor r1 a -> ⟦5\n")
case("option_without_value", 2, "'tol=' with nothing after it",
 "ground gnd\nresistor r1 gnd -> a 1k tol⟦=\n")
case("junk_after_value", 2, "a stray word after the value",
 "ground gnd\nvoltage v gnd -> a 5 V ⟦extra\n")
case("let_no_equals", 2, "let without '='",
 "ground gnd\nlet vref ⟦3.3 V\n")
case("let_no_name", 2, "let without a name",
 "ground gnd\nlet ⟦= 3\n")
# Earlier spellings: each is an error at its own column that names the new
# spelling (tests/cli/test_v2_names.py checks the wording).
case("old_param_keyword", 2, "'param', now spelled 'let'",
 "ground gnd\n⟦param vref = 3.3 V\nvoltage v gnd -> a vref\nresistor r a -> gnd 1k\n")
case("old_source_rs", 2, "a source's rs=, now rint=",
 "ground gnd\nvoltage v gnd -> a 5 V ⟦rs=2\nresistor r a -> gnd 1k\n")
case("old_diode_is", 2, "a diode's is=, now isat=",
 "ground gnd\nvoltage v gnd -> a 5 V\nresistor r a -> k 1k\ndiode d k -> gnd ⟦is=2n\n")
case("old_diode_n", 2, "a diode's n=, now ideality=",
 "ground gnd\nvoltage v gnd -> a 5 V\nresistor r a -> k 1k\ndiode d k -> gnd isat=2n ⟦n=1.8\n")
case("old_led_rs", 2, "an led's rs=, now rbulk=",
 "ground gnd\nvoltage v gnd -> a 5 V\nresistor r a -> k 150\nled d k -> gnd vf=2V ⟦rs=5\n")
case("old_zener_is", 2, "a zener's is=, now isat=",
 "ground gnd\nvoltage v gnd -> a 12 V\nresistor r a -> k 1k\nzener z gnd -> k vz=5.1V ⟦is=1p\n")
case("old_ntc_temp", 2, "an ntc's temp=, now celsius=",
 "ground gnd\nvoltage v gnd -> a 3.3 V\nresistor r a -> t 10k\nntc th t -> gnd r25=10k beta=3950 ⟦temp=40\n")
case("unclosed_paren", 2, "'(' never closed",
 "ground gnd\nlet x = (1 + 2⟦\n")
case("missing_operand", 2, "an operator with nothing after it",
 "ground gnd\nlet x = 1 +⟦\n")
case("expression_too_deep", 2, "parentheses nested past the expression depth limit (200)",
 "ground gnd\nlet x = " + "(" * 100 + "⟦" + "(" * 50 + "1" + ")" * 150 + "\n")
case("too_many_arguments", 2, "a function call with 9 arguments",
 "ground gnd\nlet x = max(1, 2, 3, 4, 5, 6, 7, 8, ⟦9)\n")
case("expect_eq_without_within", 2, "'=' in an expect needs a tolerance",
 "ground gnd\nvoltage v gnd -> a 1 V\nexpect a = ⟦1 V\n")
case("within_with_less", 2, "'within' after '<'",
 "ground gnd\nvoltage v gnd -> a 1 V\nexpect a < 2 V ⟦within 1%\n")
case("between_without_and", 2, "between LOW or HIGH",
 "ground gnd\nvoltage v gnd -> a 1 V\nexpect a between 1 V ⟦or 2 V\n")
case("bad_comparison", 2, "an arrow where a comparison goes",
 "ground gnd\nvoltage v gnd -> a 1 V\nexpect a ⟦-> 1 V\n")
case("reserved_in_expect", 2, "'within' used as a value",
 "ground gnd\nvoltage v gnd -> a 1 V\nexpect ⟦within = 1\n")
case("unknown_rule", 2, "a rule other than ratio",
 "ground gnd\nrule ⟦zratio >= 10\n")
case("rule_maximum", 2, "a ratio rule written as a maximum",
 "ground gnd\n⟦rule ratio <= 10\n")
case("end_without_block", 2, "a stray 'end'",
 "ground gnd\n⟦end\n")
case("unterminated_block", 2, "a block that never ends (the error is at the end of the file)",
 "ground gnd\nblock div top mid bottom\n  resistor upper top -> mid 10k\n  resistor lower mid -> bottom 10k\n⟦")
case("nested_block_definition", 2, "a block defined inside a block",
 "ground gnd\nblock outer a\n  ⟦block inner b\n  end\nend\n")
case("title_in_block", 2, "title inside a block",
 "ground gnd\nblock stage a\n  ⟦title \"x\"\nend\n")
case("ground_in_block", 2, "ground inside a block",
 "ground gnd\nblock stage a\n  ⟦ground g2\nend\n")
case("title_not_quoted", 2, "a title without quotes",
 "⟦title Tank\nground gnd\n".replace("⟦title ", "title ⟦"))
case("statement_starts_with_number", 2, "a line that starts with a number",
 "ground gnd\n⟦42 resistor r a -> b 1k\n")
case("too_many_options", 2, "65 options on one statement",
 "ground gnd\nresistor r1 a -> gnd 1k " + " ".join("o%d=1" % i for i in range(64)) + " ⟦o64=1\n")
case("too_many_use_options", 2, "321 options on one use (a block's 256 pins and 64 params are the most)",
 "ground gnd\nuse stage s1 " + " ".join("o%d=1" % i for i in range(320)) + " ⟦o320=1\n")
case("too_many_pins", 2, "a block with 257 pins",
 "ground gnd\nblock wide " + " ".join("p%d" % i for i in range(256)) + " ⟦p256\nend\n")
case("include_self", 2, "a file that includes itself",
 "ground gnd\ninclude ⟦\"include_self.stack\"\n")
case("include_cycle", 2, "a cycle through two included files",
 "ground gnd\ninclude \"inc/cycle_a.stack\"\n", where=("inc/cycle_b.stack", 2, 9))
case("include_depth", 2, "includes nested 17 deep (the limit is 16)",
 "ground gnd\ninclude \"inc/deep_01.stack\"\n", where=("inc/deep_16.stack", 2, 9))
case("include_missing", 2, "an included file that does not exist",
 "ground gnd\ninclude ⟦\"inc/no_such_file.stack\"\n")
case("include_not_string", 2, "an include without quotes",
 "ground gnd\ninclude ⟦inc\n")
case("include_directory", 2, "an include naming a directory",
 "ground gnd\ninclude ⟦\"inc\"\n")
case("include_device", 2, "an include naming a device that never ends",
 "ground gnd\ninclude ⟦\"/dev/zero\"\n")
case("include_ends_block", 2, "an included file whose 'end' would close the includer's block",
 "ground gnd\nblock stage a\n  include \"inc/stray_end.stack\"\nend\n", where=("inc/stray_end.stack", 2, 1))

# ---------------- elaboration ----------------
case("duplicate_part", 2, "two parts with one name",
 "ground gnd\nvoltage v gnd -> a 1 V\nresistor r1 a -> gnd 1k\nresistor ⟦r1 a -> gnd 2k\n")
case("part_named_like_node", 2, "a part named like an existing node",
 "ground gnd\nvoltage v gnd -> a 1 V\nresistor ⟦a a -> gnd 1k\n")
case("unit_in_wrong_slot", 2, "a voltage given as a resistance",
 "ground gnd\nvoltage v gnd -> a 1 V\nresistor r a -> gnd ⟦5 V\n")
case("add_volts_and_amps", 2, "1 V + 1 mA",
 "ground gnd\nlet x = 1 V ⟦+ 1 mA\n")
case("unknown_parameter", 2, "a value naming no let",
 "ground gnd\nvoltage v gnd -> a 1 V\nresistor r a -> gnd ⟦rload\n")
case("zero_resistance", 2, "a 0 ohm resistor",
 "ground gnd\nvoltage v gnd -> a 1 V\nresistor r a -> gnd ⟦0\n")
case("negative_resistance", 2, "a negative resistor",
 "ground gnd\nvoltage v gnd -> a 1 V\nresistor r a -> gnd ⟦-1k\n")
case("nan_value", 2, "sqrt(-1) is not a number",
 "ground gnd\nlet x = ⟦sqrt(-1)\n")
case("overflow_value", 2, "a product that overflows",
 "ground gnd\nlet x = ⟦1e300 * 1e300\n")
case("infinite_log", 2, "ln(0) is minus infinity",
 "ground gnd\nlet x = ⟦ln(0)\n")
case("division_by_zero", 2, "1 / 0",
 "ground gnd\nlet x = 1 ⟦/ 0\n")
case("exponent_with_unit", 2, "a power with a unit exponent",
 "ground gnd\nlet x = 2 ⟦^ 1 V\n")
case("fractional_power_of_unit", 2, "volts to the 0.5",
 "ground gnd\nlet x = 1 V ⟦^ 0.5\n")
case("sqrt_of_volts", 2, "sqrt of a voltage",
 "ground gnd\nlet x = ⟦sqrt(2 V)\n")
case("ln_of_volts", 2, "ln of a voltage",
 "ground gnd\nlet x = ln(⟦2 V)\n")
case("function_arity", 2, "sqrt with two arguments",
 "ground gnd\nlet x = ⟦sqrt(1, 2)\n")
case("unknown_option_suggest", 2, "a misspelt option",
 "ground gnd\nresistor r gnd -> a 1k ⟦tool=1%\n")
case("unknown_option", 2, "an option the kind does not take",
 "ground gnd\nresistor r gnd -> a 1k ⟦frequency=1k\n")
case("option_twice", 2, "tol= given twice",
 "ground gnd\nresistor r gnd -> a 1k tol=1% ⟦tol=2%\n")
case("range_for_value", 2, "a range where one value goes",
 "ground gnd\nresistor r gnd -> a 1k tol=1%..⟦2%\n")
case("tolerance_too_big", 2, "tol=150%",
 "ground gnd\nresistor r gnd -> a 1k tol=⟦150%\n")
case("negative_source_resistance", 2, "rint=-1",
 "ground gnd\nvoltage v gnd -> a 5 V rint=⟦-1\nresistor r a -> gnd 1k\n")
case("bad_mode_word", 2, "a port mode that does not exist",
 "ground gnd\nport p gnd -> a mode=⟦sideways\n")
case("pin_option_not_node", 2, "a number given for an op-amp pin",
 "ground gnd\nopamp u plus=⟦1 minus=b out=c\n")
case("via_not_name", 2, "via= given a number",
 "ground gnd\ncccs f gnd -> a gain=2 via=⟦3\n")
case("opamp_missing_pin", 2, "an op-amp without minus=",
 "ground gnd\nopamp ⟦u1 plus=a out=b\n")
case("resistor_missing_value", 2, "a resistor without a value",
 "ground gnd\nresistor ⟦r gnd -> a\n")
case("pinned_part_with_arrow", 2, "FROM -> TO on an op-amp",
 "ground gnd\nopamp u ⟦a -> b\n")
case("two_terminal_without_nodes", 2, "a resistor with a value but no nodes",
 "ground gnd\nresistor ⟦r 1k\n")
case("port_with_value", 2, "a value on a port",
 "ground gnd\nport p gnd -> a ⟦1k\n")
case("main_value_twice", 2, "a vcvs gain given positionally and as gain=",
 "ground gnd\nvcvs e gnd -> x 10 ⟦gain=10 cplus=x cminus=gnd\n")
case("opamp_zero_gain", 2, "gain=0 on an op-amp",
 "ground gnd\nopamp u plus=a minus=o out=o gain=⟦0\n")
case("unknown_block_suggest", 2, "a misspelt block name",
 "ground gnd\nblock divider top mid\n  resistor r top -> mid 1k\nend\nuse ⟦dividr d1 top=a mid=b\n")
case("unknown_block", 2, "a block that does not exist",
 "ground gnd\nuse ⟦amplifier a1 in=x\n")
case("block_recursion", 2, "a block that uses itself",
 "ground gnd\nblock chain a b\n  resistor r a -> b 1k\n  use ⟦chain next a=b b=ground\nend\nuse chain c1 a=x b=gnd\n")
case("block_mutual_recursion", 2, "two blocks that use each other",
 "ground gnd\nblock ping a\n  use pong q a=a\nend\nblock pong a\n  use ⟦ping p a=a\nend\nuse ping top a=x\n")
case("block_missing_param", 2, "a parameter without a default left out",
 "ground gnd\nblock div top mid rb\n  resistor r top -> mid rb\nend\nuse div ⟦d1 top=a mid=gnd\n".replace("mid rb\n", "mid rb=\n", 1))
case("block_unknown_pin", 2, "a misspelt pin in a use",
 "ground gnd\nblock div top mid\n  resistor r top -> mid 1k\nend\nuse div d1 ⟦tpo=a mid=gnd\n")
case("block_pin_unconnected", 2, "a pin left out of a use",
 "ground gnd\nblock div top mid\n  resistor r top -> mid 1k\nend\nuse div ⟦d1 top=a\n")
case("block_pin_twice", 2, "a pin connected twice",
 "ground gnd\nblock div top mid\n  resistor r top -> mid 1k\nend\nuse div d1 top=a mid=gnd ⟦top=b\n")
case("block_pin_expression", 2, "a pin given a voltage instead of a node",
 "ground gnd\nblock div top mid\n  resistor r top -> mid 1k\nend\nuse div d1 top=⟦1 V mid=gnd\n")
case("block_defined_twice", 2, "two blocks with one name",
 "ground gnd\nblock div a\nend\nblock ⟦div a\nend\n")
case("block_pin_listed_twice", 2, "a pin listed twice",
 "ground gnd\nblock div a ⟦a\nend\n")
case("block_pin_is_param", 2, "a name that is both a pin and a parameter",
 "ground gnd\nblock div ⟦a b a=1\nend\n")
case("rule_in_block", 2, "a rule inside a block",
 "ground gnd\nblock stage a\n  resistor r a -> ground 1k\n  ⟦rule ratio >= 10\nend\nvoltage v gnd -> x 1 V\nuse stage s1 a=x\n")
case("second_ground", 2, "two ground statements",
 "ground gnd\n⟦ground earth\n")
case("second_title", 2, "two titles",
 "title \"one\"\n⟦title \"two\"\nground gnd\n")
case("second_rule", 2, "two ratio rules",
 "ground gnd\nrule ratio >= 10\n⟦rule ratio >= 5\n")
case("no_ground", 2, "a circuit without a ground statement (reported at the top of the file)",
 "voltage v a -> b 1 V\nresistor r b -> a 1k\n", where=("no_ground.stack", 1, 1))
case("via_unknown", 2, "via= naming nothing",
 "ground gnd\nvoltage v gnd -> a 1 V\nresistor r a -> gnd 1k\ncccs f gnd -> b gain=2 via=⟦nothing\nresistor rb b -> gnd 1k\n")
case("via_loop", 2, "current-controlled sources controlling each other",
 "ground gnd\ncccs f1 gnd -> a gain=2 via=⟦f2\ncccs f2 gnd -> a gain=2 via=f1\nresistor r a -> gnd 1k\n")
case("dotted_unknown_node", 2, "a dotted node an instance does not have",
 "ground gnd\nblock div top mid\n  resistor r top -> mid 1k\nend\nvoltage v gnd -> a 1 V\nuse div d1 top=a mid=gnd\nresistor r2 ⟦d1.nope -> gnd 1k\n")
case("part_used_as_node", 2, "a part name where a node goes",
 "ground gnd\nvoltage v gnd -> a 1 V\nresistor r1 a -> gnd 1k\nresistor r2 ⟦r1 -> gnd 1k\n")
case("node_used_as_value", 2, "a node name where a value goes",
 "ground gnd\nvoltage v gnd -> a 1 V\nresistor r a -> gnd ⟦a\n")
case("expect_unknown_name", 2, "an expect naming nothing",
 "ground gnd\nvoltage v gnd -> a 1 V\nresistor r a -> gnd 1k\nexpect ⟦nowhere > 1 V\n")
case("expect_part_without_property", 2, "a part name where a value goes in an expect",
 "ground gnd\nvoltage v gnd -> a 1 V\nresistor r1 a -> gnd 1k\nexpect ⟦r1 > 1 mA\n")
case("expect_unknown_property", 2, "a property parts do not have",
 "ground gnd\nvoltage v gnd -> a 1 V\nresistor r1 a -> gnd 1k\nexpect ⟦r1.colour > 1\n")
case("expect_port_property_on_resistor", 2, "zout of a resistor",
 "ground gnd\nvoltage v gnd -> a 1 V\nresistor r1 a -> gnd 1k\nexpect ⟦r1.zout > 1\n")
case("expect_port_voltage", 2, "the voltage of a port",
 "ground gnd\nvoltage v gnd -> a 1 V\nport p a -> b\nresistor r1 b -> gnd 1k\nexpect ⟦p.voltage > 1 V\n")
case("expect_instance_as_value", 2, "an instance name in an expect",
 "ground gnd\nblock div top mid\n  resistor r top -> mid 1k\nend\nvoltage v gnd -> a 1 V\nuse div d1 top=a mid=gnd\nexpect ⟦d1 > 1 V\n")
case("expect_unit_mismatch", 2, "a voltage compared with a current",
 "ground gnd\nvoltage v gnd -> a 1 V\nresistor r a -> gnd 1k\nexpect a > ⟦1 mA\n")
case("name_too_long", 2, "a node name of 1100 bytes",
 "ground gnd\nvoltage v gnd -> ⟦" + "n" * 1100 + " 1 V\n")
case("set_unknown_param", 2, "--set naming a let the circuit does not have",
 "ground gnd\nlet vref = 3.3 V\nvoltage v gnd -> a vref\nresistor r a -> gnd 1k\n",
 args=["--set", "nope=1"], where=("--set", 1, 1))
case("set_wrong_unit", 2, "--set giving a current to a voltage let",
 "ground gnd\nlet vref = 3.3 V\nvoltage v gnd -> a vref\nresistor r a -> gnd 1k\n",
 args=["--set", "vref=5mA"], where=("--set", 1, 6))
case("set_bad_syntax", 2, "--set with a broken expression",
 "ground gnd\nlet vref = 3.3 V\nvoltage v gnd -> a vref\nresistor r a -> gnd 1k\n",
 args=["--set", "vref=5 +"], where=("--set", 1, 9))
case("set_without_equals", 2, "--set without NAME=VALUE (a usage error, no file position)",
 "ground gnd\nlet vref = 3.3 V\nvoltage v gnd -> a vref\nresistor r a -> gnd 1k\n",
 args=["--set", "vref"], where=None)

# ---------------- topology and solve ----------------
case("floating_nodes", 3, "two nodes with no DC path to ground",
 "ground gnd\nvoltage v gnd -> a 5 V\nresistor r1 a -> gnd 1k\nresistor r2 ⟦x -> y 1k\n")
case("current_source_cutset", 3, "nodes joined to ground only through a current source",
 "ground gnd\ncurrent i1 gnd -> ⟦a 1 mA\nresistor r a -> b 1k\n")
case("voltage_source_loop", 3, "two sources in parallel",
 "ground gnd\nvoltage v1 gnd -> a 5 V\nvoltage ⟦v2 gnd -> a 3 V\nresistor r a -> gnd 1k\n")
case("port_across_source", 3, "a port shorting a source",
 "ground gnd\nvoltage v gnd -> a 1 V\nport ⟦p a -> gnd\n")
case("opamp_outputs_joined", 3, "two ideal op-amp outputs on one node",
 "ground gnd\nvoltage v gnd -> a 1 V\nopamp u1 plus=a minus=o out=o\nopamp ⟦u2 plus=a minus=o out=o\nresistor rl o -> gnd 1k\n")
case("vcvs_loop", 3, "a vcvs across a voltage source",
 "ground gnd\nvoltage v gnd -> a 1 V\nvcvs ⟦e gnd -> a gain=2 cplus=a cminus=gnd\nresistor r a -> gnd 1k\n")
case("ccvs_loop", 3, "a ccvs in parallel with a port",
 "ground gnd\nvoltage v gnd -> a 1 V rint=10\nport p a -> b\nresistor r b -> gnd 1k\nccvs ⟦h a -> b rm=1k via=r\n")
case("opamp_no_feedback", 3, "an ideal op-amp whose output does not reach its inputs (singular)",
 "ground gnd\nvoltage v gnd -> a 1 V\nresistor r1 b -> gnd 1k\nopamp ⟦u plus=a minus=b out=o\nresistor rl o -> gnd 1k\n")

case("title_trailing_word", 2, "a word after the title's string",
 "title \"Tank-level sender\" ⟦extra\nground gnd\n")
case("block_param_twice", 2, "a block parameter given twice in a use",
 "ground gnd\nblock div top mid rb=10k\n  resistor r top -> mid rb\nend\nuse div d1 top=a mid=gnd rb=1k ⟦rb=2k\n")
case("pot_position_out_of_range", 2, "a wiper position beyond 0..1",
 "ground gnd\nvoltage v gnd -> top 5 V\npot p1 10k a=top wiper=w b=gnd at=⟦1.5\n")
case("adc_bits_not_whole", 2, "12.5 bits",
 "ground gnd\nvoltage v gnd -> x 1 V\nadc in1 in=x ref=3.3 V bits=⟦12.5\n")
case("switch_state_param_out_of_range", 2, "a switch state let whose value is no state",
 "ground gnd\nlet pump = 5\nvoltage v gnd -> a 1 V\nswitch s1 a -> b state=⟦pump\nresistor r b -> gnd 1k\n")
case("rails_not_range", 2, "rails= given one node",
 "ground gnd\nvoltage v gnd -> a 1 V\nopamp u plus=a minus=o out=o rails=⟦gnd\nresistor r o -> gnd 1k\n")
case("rails_inverted", 2, "rails= with its ends swapped",
 "ground gnd\nvoltage v gnd -> a 1 V\nopamp u plus=a minus=o out=o rails=⟦5 V..0 V\nresistor r o -> gnd 1k\n")
case("diode_reverse_current", 3, "a current source forcing current backwards through a diode",
 "ground gnd\ncurrent i1 gnd -> a 1 mA\ndiode ⟦d1 gnd -> a\n")
case("diode_unlimited_current", 3, "a stiff source straight across a diode, nothing to limit the current",
 "ground gnd\nvoltage v gnd -> a 5 V\ndiode ⟦d1 a -> gnd\n")
case("missing_circuit_file", 2, "a circuit file that does not exist (no place in a file to point at)",
 "# the runner passes the name below instead of this file\n", args=None, where=None)

body = "ground gnd\ncurrent i0 gnd -> a 1 mA\nresistor r0 a -> gnd 1k\n"
for k in range(1, 35):
    body += "cccs f%d gnd -> n%d gain=1 via=%s%s\nresistor rn%d n%d -> gnd 1k\n" % (
        k, k, "⟦" if k == 34 else "", "r0" if k == 1 else "f%d" % (k - 1), k, k)
case("via_chain_too_deep", 2, "34 current-controlled sources chained through via= (the limit is 32 links)", body)

for name, code, desc, body, args, where in cases:
    if where is None and args is None or (where is None and M in body):
        pass
    lines_hdr = ["# bad input: " + desc]
    if args:
        import shlex
        lines_hdr.append("# args: " + " ".join(shlex.quote(a) for a in args))
    text = body
    if where is not None:
        w = "%s:%d:%d" % where
    elif M in body:
        i = body.index(M)
        before = body[:i]
        line = before.count("\n") + 1 + len(lines_hdr) + 1
        col = len(before) - (before.rfind("\n") + 1) + 1
        w = "%s.stack:%d:%d" % (name, line, col)
        text = body.replace(M, "", 1)
    else:
        w = "-"
    if name == "missing_circuit_file":
        lines_hdr.append("# file: no_such_circuit.stack")
    hdr = "\n".join(lines_hdr[:1] + ["# expect: %d %s" % (code, w)] + lines_hdr[1:]) + "\n"
    # the expect line goes second; keep args third; line offsets: header has len(lines_hdr)+1 lines
    with open(os.path.join(OUT, name + ".stack"), "wb") as f:
        f.write((hdr + text).encode("utf-8"))
print(len(cases), "cases")

# ---------------- limits that need bigger files ----------------
big = []
# block nesting: b1 uses b2 ... b33 uses b34; the use at depth 33 is refused
body = "ground gnd\n"
for i in range(1, 34):
    body += "block b%d a\n  %suse b%d inner a=a\nend\n" % (i, "⟦" if i == 32 else "", i + 1)
body += "block b34 a\n  resistor r a -> ground 1k\nend\nvoltage v gnd -> x 1 V\nuse b1 top a=x\n"
# the marker must sit before 'b33' (the block name, kw_loc of the use): move it
body = body.replace("⟦use b33", "use ⟦b33")
big.append(("block_nesting_depth", 2, "blocks nested 33 deep (the limit is 32)", body, None))
# instance count: 1001 uses of a block holding 1000 uses of an empty block;
# each top-level use makes 1001 instances, so the 1000th (r999) takes the
# count from 999999 to 1001000, past the limit: refused there, before expanding
body = "ground gnd\nblock leaf\nend\nblock row\n"
body += "".join("  use leaf l%d\n" % i for i in range(1000)) + "end\n"
body += "".join("use %srow r%d\n" % ("⟦" if i == 999 else "", i) for i in range(1001))
big.append(("instance_limit", 2, "more than 1000000 block instances", body, None))
# part count: a row of 200 leaves of 100 resistors is 20000 parts; after the
# source and 2500 rows the count is 50000001: the 2500th use (w2499) crosses the limit
body = "ground gnd\nblock leaf a\n" + "".join("  resistor r%d a -> ground 1k\n" % i for i in range(100))
body += "end\nblock row a\n" + "".join("  use leaf l%d a=a\n" % i for i in range(200)) + "end\n"
body += "voltage v gnd -> top 1 V\n" + "".join("use %srow w%d a=top\n" % ("⟦" if i == 2499 else "", i) for i in range(2510))
big.append(("part_limit", 2, "more than 50000000 parts after expansion", body, None))
# dense solver: 81 instances of a 100-node chain = 8101 unknowns with --solver dense
body = "ground gnd\nblock chain a\n" + "".join("  resistor r%d n%d -> n%d 1k\n" % (i, i, i + 1) for i in range(100))
body += "  resistor rin a -> n0 1k\n  resistor rend n100 -> ground 1k\nend\nvoltage v gnd -> x 1 V\n"
body += "".join("use chain c%d a=x\n" % i for i in range(81))
big.append(("dense_too_large", 3, "8101 unknowns for the dense solver (the limit is 8000); no place in the file",
            body, ["--solver", "dense"]))
for name, code, desc, body, args in big:
    import shlex
    hdr = ["# bad input: " + desc]
    if M in body:
        i = body.index(M)
        before = body[:i]
        nh = 2 + (1 if args else 0)
        w = "%s.stack:%d:%d" % (name, before.count("\n") + 1 + nh, len(before) - (before.rfind("\n") + 1) + 1)
        body = body.replace(M, "", 1)
    else:
        w = "-"
    hdr.append("# expect: %d %s" % (code, w))
    if args:
        hdr.append("# args: " + " ".join(shlex.quote(a) for a in args))
    with open(os.path.join(OUT, name + ".stack"), "w") as f:
        f.write("\n".join(hdr) + "\n" + body)
print(len(big), "big cases")
