# bash completion for loadstack                                -*- shell-script -*-
#
# Completes the command, its options and their fixed values, *.stack files,
# node names for the commands that take a NODE (read from the circuit by
# `loadstack solve FILE --format json`), node names and part and port
# properties for a QUANTITY, and the circuit's top-level lets for `sweep`
# and `--set`.
# Installed as share/bash-completion/completions/loadstack.

_loadstack_commands="solve check sag thevenin influence tol sweep formula fit pick chain demo"
_loadstack_all="--format --output --ascii --digits --quiet --help --version"
_loadstack_circuit="--set --min-ratio --solver --derate"

# The options one command takes: those of every command, those of every
# command that reads a circuit (all but pick), and its own.
_loadstack_options()
{
    local extra=""
    case $1 in
        check) extra="$_loadstack_circuit --fail-on" ;;
        thevenin) extra="$_loadstack_circuit --load --meter" ;;
        sag) extra="$_loadstack_circuit --what-if" ;;
        tol) extra="$_loadstack_circuit --trials --seed --dist --plot" ;;
        sweep) extra="$_loadstack_circuit --steps --log --plot" ;;
        pick) extra="--series --total --zout" ;;
        chain) extra="$_loadstack_circuit --plot --plot-all" ;;
        solve | demo) extra="$_loadstack_circuit --plot-all" ;;
        formula) extra="$_loadstack_circuit --symbols --ideal" ;;
        fit) extra="$_loadstack_circuit --series --goal --top --max-solves --write --trials --seed --dist" ;;
        *) extra="$_loadstack_circuit" ;;
    esac
    echo "$_loadstack_all $extra"
}

# The warning codes for --fail-on, as `loadstack check --help` lists them.
_loadstack_codes()
{
    echo warnings
    "${_loadstack_prog:-loadstack}" check --help 2>/dev/null | sed -n 's/^  warning codes: //p' | tr ',' ' '
}

# Node names of circuit file $1, one a line, from the solve report in JSON
# (nothing when the file does not solve).
_loadstack_nodes()
{
    [ -r "$1" ] || return
    "${_loadstack_prog:-loadstack}" solve "$1" --format json 2>/dev/null \
        | sed -n '/^  "nodes": {/,/^  }/s/^    "\([^"]*\)":.*/\1/p'
}

# Node and port names of circuit file $1 (what thevenin takes), one a line.
_loadstack_nodes_ports()
{
    [ -r "$1" ] || return
    "${_loadstack_prog:-loadstack}" solve "$1" --format json 2>/dev/null | sed -n \
        -e '/^  "nodes": {/,/^  }/s/^    "\([^"]*\)":.*/\1/p' \
        -e '/^  "ports": {/,/^  }/s/^    "\([^"]*\)":.*/\1/p'
}

# What a QUANTITY may name in circuit file $1: node names, PART.current,
# PART.voltage, PART.power, an adc's and a thermistor's own properties and the
# fields of every PORT.  (The first rule that matches a line prints it.)
_loadstack_quantities()
{
    [ -r "$1" ] || return
    "${_loadstack_prog:-loadstack}" solve "$1" --format json 2>/dev/null | sed -n \
        -e '/^  "nodes": {/,/^  }/s/^    "\([^"]*\)":.*/\1/p' \
        -e '/^  "parts": {/,/^  }/s/^    "\([^"]*\)": {"kind": "adc".*/\1.current\n\1.voltage\n\1.power\n\1.code\n\1.error_lsb\n\1.unloaded\n\1.source/p' \
        -e '/^  "parts": {/,/^  }/s/^    "\([^"]*\)": {"kind": "ntc".*/\1.current\n\1.voltage\n\1.power\n\1.resistance\n\1.temperature/p' \
        -e '/^  "parts": {/,/^  }/s/^    "\([^"]*\)":.*/\1.current\n\1.voltage\n\1.power/p' \
        -e '/^  "ports": {/,/^  }/s/^    "\([^"]*\)":.*/\1.open\n\1.loaded\n\1.sag\n\1.sag_rel\n\1.zout\n\1.zin\n\1.ratio\n\1.current\n\1.budget/p'
}

# Part names of circuit file $1, from the solve report in JSON.
_loadstack_parts()
{
    [ -r "$1" ] || return
    "${_loadstack_prog:-loadstack}" solve "$1" --format json 2>/dev/null \
        | sed -n '/^  "parts": {/,/^  }/s/^    "\([^"]*\)":.*/\1/p'
}

# Top-level let names of circuit file $1 (statements `let NAME = ...`).
_loadstack_lets()
{
    [ -r "$1" ] || return
    sed -n 's/^[[:space:]]*let[[:space:]]\{1,\}\([A-Za-z_][A-Za-z0-9_]*\).*/\1/p' "$1" 2>/dev/null
}

_loadstack()
{
    local cur prev words cword
    if declare -F _init_completion >/dev/null 2>&1; then
        _init_completion -n = || return
    else
        cur=${COMP_WORDS[COMP_CWORD]}
        prev=${COMP_WORDS[COMP_CWORD-1]}
        words=("${COMP_WORDS[@]}")
        cword=$COMP_CWORD
    fi
    _loadstack_prog=${words[0]}
    # --name=value: complete the value as if it were a word of its own.
    if [[ $cur == --*=* ]]; then
        prev=${cur%%=*}
        cur=${cur#*=}
    elif [[ $prev == "=" && ${words[cword-2]} == --* ]]; then
        prev=${words[cword-2]}
    elif [[ $cur == "=" && $prev == --* ]]; then
        cur=""
    fi

    # The command and the positional arguments typed so far.
    local cmd="" file="" i npos=0
    for ((i = 1; i < cword; i++)); do
        case ${words[i]} in
            --set | --format | --output | --min-ratio | --solver | --derate | --load | --meter | \
            --trials | --seed | --dist | --plot | --steps | --series | --total | --zout | --symbols | \
            --goal | --top | --max-solves | --write)
                # the value follows, as a word, or after a "=" word of its own
                if [[ ${words[i+1]} == "=" ]]; then ((i += 2)); else ((i++)); fi ;;
            -* | = ) ;;
            *)
                if [ -z "$cmd" ]; then
                    cmd=${words[i]}
                else
                    ((npos++))
                    [ $npos -eq 1 ] && file=${words[i]}
                fi ;;
        esac
    done

    # Values of options.
    case $prev in
        --format) COMPREPLY=($(compgen -W "text json csv html" -- "$cur")); return ;;
        --solver) COMPREPLY=($(compgen -W "auto dense sparse iterative" -- "$cur")); return ;;
        --dist) COMPREPLY=($(compgen -W "uniform normal" -- "$cur")); return ;;
        --goal) COMPREPLY=($(compgen -W "margin yield current" -- "$cur")); return ;;
        --write)
            compopt -o filenames 2>/dev/null
            COMPREPLY=($(compgen -f -X '!*.stack' -- "$cur") $(compgen -d -- "$cur")); return ;;
        --series) COMPREPLY=($(compgen -W "E6 E12 E24 E48 E96 E192" -- "$cur")); return ;;
        --fail-on)
            # a comma-separated list: complete the code after the last comma
            local head=${cur%,*} last=${cur##*,}
            [ "$head" = "$cur" ] && head="" || head="$head,"
            COMPREPLY=($(compgen -P "$head" -W "$(_loadstack_codes)" -- "$last")); return ;;
        --output) compopt -o filenames 2>/dev/null; COMPREPLY=($(compgen -f -- "$cur")); return ;;
        --plot)
            compopt -o filenames 2>/dev/null
            COMPREPLY=($(compgen -f -X '!*.svg' -- "$cur") $(compgen -f -X '!*.png' -- "$cur") \
                $(compgen -f -X '!*.pdf' -- "$cur") \
                $(compgen -d -- "$cur")); return ;;
        --set)
            compopt -o nospace 2>/dev/null
            COMPREPLY=($(compgen -S = -W "$(_loadstack_lets "$file")" -- "$cur")); return ;;
        --symbols)
            # a comma-separated list: complete the name after the last comma
            local done_part="" last=$cur
            [[ $cur == *,* ]] && done_part=${cur%,*}, && last=${cur##*,}
            compopt -o nospace 2>/dev/null
            COMPREPLY=($(compgen -P "$done_part" -W "$(_loadstack_parts "$file") $(_loadstack_lets "$file")" -- "$last"))
            return ;;
        --min-ratio | --derate | --load | --meter | --trials | --seed | --steps | --total | --zout | --digits | --top | --max-solves)
            return ;;
    esac

    if [ -z "$cmd" ]; then
        if [[ $cur == -* ]]; then
            COMPREPLY=($(compgen -W "--help --version" -- "$cur"))
        else
            COMPREPLY=($(compgen -W "$_loadstack_commands" -- "$cur"))
        fi
        return
    fi
    if [[ $cur == -* ]]; then
        COMPREPLY=($(compgen -W "$(_loadstack_options "$cmd")" -- "$cur"))
        return
    fi

    # Positional arguments: FILE first for every command that reads a circuit.
    case $cmd in
        demo) return ;;
        pick)
            [ $npos -eq 0 ] && COMPREPLY=($(compgen -W "ratio" -- "$cur"))
            return ;;
    esac
    if [ $npos -eq 0 ]; then
        compopt -o filenames 2>/dev/null
        COMPREPLY=($(compgen -f -X '!*.stack' -- "$cur") $(compgen -d -- "$cur"))
        return
    fi
    case $cmd in
        sag)
            [ $npos -eq 1 ] && COMPREPLY=($(compgen -W "$(_loadstack_nodes "$file")" -- "$cur")) ;;
        thevenin)
            [ $npos -eq 1 ] && COMPREPLY=($(compgen -W "$(_loadstack_nodes_ports "$file")" -- "$cur")) ;;
        influence | tol | formula)
            [ $npos -eq 1 ] && COMPREPLY=($(compgen -W "$(_loadstack_quantities "$file")" -- "$cur")) ;;
        sweep)
            if [ $npos -eq 1 ]; then
                COMPREPLY=($(compgen -W "$(_loadstack_lets "$file")" -- "$cur"))
            elif [ $npos -ge 4 ]; then
                COMPREPLY=($(compgen -W "$(_loadstack_quantities "$file")" -- "$cur"))
            fi ;;
    esac
}

complete -F _loadstack loadstack
