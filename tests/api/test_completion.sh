#!/bin/bash
# The bash completion script, sourced into bash with COMP_WORDS set by hand:
# commands, options per command (compared with what `loadstack COMMAND --help`
# lists), option values, .stack files, node names (compared with the "nodes"
# keys of `loadstack solve --format json`, read by Python's json module) and
# params.  Run once with bash's plain completion, and once more on top of the
# bash-completion package when it is installed.
# Usage: test_completion.sh COMPLETION_SCRIPT LOADSTACK SOURCE_ROOT
set -u
script=$(readlink -f "$1") prog=$(readlink -f "$2") src=$3
work=$(mktemp -d)
trap 'rm -rf "$work"' EXIT
cd "$work" || exit 1
mkdir sub
touch notes.txt other.stack
cat > chain.stack <<'STACK'
title "Completion fixture"
let vset = 5 V
let r_load = 10k
ground gnd
voltage  vs   gnd -> top  vset
resistor r1   top -> mid  10k
resistor r2   mid -> gnd  10k
port     p    mid -> in
resistor rl   in -> gnd   r_load
STACK

failures=0
# complete WORD... : run the completion function on the words, the last one
# being completed; prints the candidates sorted, one a line.
complete_words() {
    COMP_WORDS=("$prog" "$@")
    COMP_CWORD=$#
    # the line as typed: bash splits "--name=value" into three words, with no
    # blanks around the "="
    COMP_LINE="${COMP_WORDS[*]}"
    COMP_LINE=${COMP_LINE// = /=}
    COMP_LINE=${COMP_LINE% =}
    [[ ${COMP_WORDS[COMP_CWORD]} == "=" ]] && COMP_LINE+="="
    COMP_POINT=${#COMP_LINE}
    COMPREPLY=()
    _loadstack
    printf '%s\n' "${COMPREPLY[@]}" | sed '/^$/d' | sort
}
expect() {  # expect NAME WANT GOT
    if [ "$2" != "$3" ]; then
        echo "FAIL ($mode) $1:"; echo "  want: $(echo "$2" | tr '\n' ' ')"; echo "  got:  $(echo "$3" | tr '\n' ' ')"
        failures=$((failures + 1))
    fi
}
lines() { printf '%s\n' "$@" | sort; }

# Commands and options as the program's own help lists them.
help_commands=$("$prog" --help | sed -n '/^commands:/,/^$/s/^  \([a-z]\{1,\}\) .*/\1/p' | sort)
[ -n "$help_commands" ] || { echo "FAIL: no commands read from loadstack --help"; exit 1; }
json_nodes=$("$prog" solve chain.stack --format json \
    | /usr/bin/python3 -c 'import json,sys; print("\n".join(sorted(json.load(sys.stdin)["nodes"])))')
# QUANTITY: the nodes, and the properties an expect may use (docs/language.md)
json_quantities=$("$prog" solve chain.stack --format json | /usr/bin/python3 -c '
import json, sys
r = json.load(sys.stdin)
q = list(r["nodes"])
own = {"adc": ("code", "error_lsb", "unloaded", "source"), "ntc": ("resistance", "temperature")}
q += [p + "." + f for p in r["parts"] for f in ("current", "voltage", "power") + own.get(r["parts"][p]["kind"], ())]
q += [p + "." + f for p in r["ports"]
      for f in ("open", "loaded", "sag", "sag_rel", "zout", "zin", "ratio", "current", "budget")]
print("\n".join(sorted(q)))')

run_all() {
    expect "commands" "$help_commands" "$(complete_words '')"
    expect "s..." "$(echo "$help_commands" | grep '^s')" "$(complete_words s)"
    for c in $help_commands; do
        want=$("$prog" "$c" --help | sed -n 's/^  \(--[a-z-]*\).*/\1/p' | sort)
        expect "options of $c" "$want" "$(complete_words "$c" --)"
    done
    expect "stack files" "$(lines chain.stack other.stack sub)" "$(complete_words solve '')"
    expect "stack files c" "chain.stack" "$(complete_words check c)"
    expect "sag NODE" "$json_nodes" "$(complete_words sag chain.stack '')"
    expect "thevenin NODE m" "mid" "$(complete_words thevenin chain.stack m)"
    expect "NODE after options" "$json_nodes" "$(complete_words sag --format json chain.stack '')"
    expect "influence QUANTITY" "$json_quantities" "$(complete_words influence chain.stack '')"
    expect "tol QUANTITY p." "$(echo "$json_quantities" | grep '^p\.')" "$(complete_words tol chain.stack p.)"
    expect "influence r1." "$(lines r1.current r1.power r1.voltage)" "$(complete_words influence chain.stack r1.)"
    expect "no third argument" "" "$(complete_words sag chain.stack mid '')"
    expect "sweep PARAM" "$(lines r_load vset)" "$(complete_words sweep chain.stack '')"
    expect "sweep QUANTITY" "$json_quantities" "$(complete_words sweep chain.stack vset 1 10 '')"
    expect "--set" "vset=" "$(complete_words solve chain.stack --set v)"
    expect "--format" "$(lines csv html json text)" "$(complete_words solve chain.stack --format '')"
    expect "--solver d" "dense" "$(complete_words solve chain.stack --solver d)"
    expect "--format=" "$(lines csv html json text)" "$(complete_words solve chain.stack --format = '')"
    expect "--format=j" "json" "$(complete_words solve chain.stack --format = j)"
    expect "NODE after --format=json" "$json_nodes" "$(complete_words sag --format = json chain.stack '')"
    expect "--dist" "$(lines normal uniform)" "$(complete_words tol chain.stack mid --dist '')"
    expect "pick ratio" "ratio" "$(complete_words pick '')"
    # --fail-on: the codes of docs/warnings.md (and "warnings"), after a comma too
    doc_codes=$(sed -n 's/^### `\([a-z0-9-]*\)`$/\1/p' "$src/docs/warnings.md")
    expect "--fail-on" "$(lines warnings $doc_codes)" "$(complete_words check chain.stack --fail-on '')"
    expect "--fail-on over-rating,tol-" "$(lines over-rating,tol-corner over-rating,tol-none over-rating,tol-trials)" \
        "$(complete_words check chain.stack --fail-on over-rating,tol-)"
    expect "demo" "" "$(complete_words demo '')"
    expect "no nodes from a missing file" "" "$(complete_words sag missing.stack '')"
}

mode=plain
# shellcheck disable=SC1090
source "$script"
run_all
if [ -r /usr/share/bash-completion/bash_completion ]; then
    mode=bash-completion
    # shellcheck disable=SC1091
    source /usr/share/bash-completion/bash_completion
    source "$script"
    run_all
fi
[ $failures -eq 0 ] || { echo "$failures completion checks failed"; exit 1; }
echo "completion ok"
