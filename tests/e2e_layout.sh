#!/bin/sh
# Layout of the source tree (DEVELOPERS.md, "Rules of the house"): the
# modules' #include "..." lines form no cycle (module = file name without
# .c/.h: el_fit.c and el_fit.h are one module) and no library file
# (src/el_*.c, src/el_*.h) is longer than 1,500 lines. The checker is first
# run on a small tree made here with one cycle and one long file, so a
# checker that finds nothing fails too. Run by tests/run.sh (EIGENLOG is not
# used); `sh tests/e2e_layout.sh DIR` checks another source folder.
set -u
src=${1:-src}
max_lines=1500
tmp=$(mktemp -d)
trap 'rm -rf "$tmp"' EXIT
passed=0
failed=0
check() { # check NAME CONDITION-EXIT-STATUS
    if [ "$2" -eq 0 ]; then passed=$((passed + 1)); else failed=$((failed + 1)); echo "FAIL $1"; fi
}

# Prints "module included-module" for every #include "..." of DIR's .c/.h.
edges() {
    for f in "$1"/*.c "$1"/*.h; do
        [ -f "$f" ] || continue
        awk -v from="$(basename "$f" | sed 's/\.[ch]$//')" '
            /^[ \t]*#[ \t]*include[ \t]*"/ {
                s = $0; sub(/^[^"]*"/, "", s); sub(/".*$/, "", s)
                sub(/^.*\//, "", s); sub(/\.[ch]$/, "", s)
                if (s != from) print from, s
            }' "$f"
    done | sort -u
}

# Prints one line "cycle: a -> b -> ... -> a" per back edge found by a
# depth-first search of the module graph (nothing when there is none).
cycles() {
    edges "$1" | awk '
        { n = ++deg[$1]; adj[$1, n] = $2; node[$1] = 1; node[$2] = 1 }
        function visit(v,    i, w, k, p) {
            colour[v] = 1; stack[++depth] = v
            for (i = 1; i <= deg[v]; i++) {
                w = adj[v, i]
                if (colour[w] == 1) {
                    p = ""
                    for (k = 1; k <= depth; k++) if (stack[k] == w) break
                    for (; k <= depth; k++) p = p stack[k] " -> "
                    print "cycle: " p w
                } else if (colour[w] == 0) visit(w)
            }
            depth--; colour[v] = 2
        }
        END { for (v in node) if (colour[v] == 0) visit(v) }'
}

# Prints "long: FILE N lines" for every library file over the limit.
long_files() {
    for f in "$1"/el_*.c "$1"/el_*.h; do
        [ -f "$f" ] || continue
        n=$(wc -l <"$f")
        [ "$n" -le "$max_lines" ] || echo "long: $f $n lines"
    done
}

# The checker must see a planted cycle (el_a.h -> el_b, el_b.c -> el_a,
# through the header/source pairing) and a planted long file.
mkdir "$tmp/src"
printf '#include "el_b.h"\n' >"$tmp/src/el_a.h"
printf '#include "el_a.h"\n' >"$tmp/src/el_b.c"
printf '/* b */\n' >"$tmp/src/el_b.h"
awk -v n=$((max_lines + 1)) 'BEGIN { for (i = 0; i < n; i++) print "/* line */" }' \
    >"$tmp/src/el_long.c"
cycles "$tmp/src" | grep -q "el_a -> el_b -> el_a\|el_b -> el_a -> el_b"
check "the checker finds a planted include cycle" $?
long_files "$tmp/src" | grep -q "el_long.c $((max_lines + 1)) lines"
check "the checker finds a planted file of $((max_lines + 1)) lines" $?

[ -n "$(edges "$src")" ]
check "$src has #include lines to check" $?
found=$(cycles "$src")
[ -z "$found" ]
check "no include cycle among the modules of $src" $?
[ -n "$found" ] && echo "$found"
long=$(long_files "$src")
[ -z "$long" ]
check "no library file in $src over $max_lines lines" $?
[ -n "$long" ] && echo "$long"

echo "e2e_layout: $passed passed, $failed failed"
[ "$failed" -eq 0 ]
