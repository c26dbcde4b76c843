#!/usr/bin/env bash
# Man pages generated from --help by help2man (Debian help2man) at build time:
# one for lodestone and one for every subcommand `lodestone --help` lists. Each is
# in the build folder, installed by `cmake --install --component man` under
# share/man/man1 unchanged, and rendered by `man -l` (Debian man-db and groff) at
# 80 columns without complaint, with NAME, SYNOPSIS, every option the command's
# --help lists, an EXAMPLES section holding the help's example lines, and the
# version `lodestone --version` prints on its first line.
set -euo pipefail
: "${LODESTONE:?}" "${LODESTONE_BUILD:?}"
fail() { echo "FAIL: $*" >&2; exit 1; }
command -v help2man >/dev/null || fail "help2man is not installed (scripts/install-deps installs it)"
command -v man >/dev/null || fail "man is not installed (scripts/install-deps installs man-db)"
tmp="$(mktemp -d)"
trap 'rm -rf "$tmp"' EXIT

version=$(timeout 60 "$LODESTONE" --version | head -n 1)
[[ "$version" =~ ^lodestone\ ([0-9]+\.[0-9]+\.[0-9]+)$ ]] || fail "lodestone --version printed '$version'"
version=${BASH_REMATCH[1]}
subcommands=$(timeout 60 "$LODESTONE" --help | awk '/^Subcommands:/ {f = 1; next} f && /^  [a-z]/ {print $1} f && /^$/ {exit}')
[ -n "$subcommands" ] || fail "lodestone --help lists no subcommands"

timeout 300 cmake --install "$LODESTONE_BUILD" --prefix "$tmp/prefix" --component man >/dev/null
installed_dir="$tmp/prefix/share/man/man1"

check_page() {  # page-name help-command...
  local page="$1"; shift
  local built="$LODESTONE_BUILD/man/man1/$page.1" installed="$installed_dir/$page.1"
  [ -s "$built" ] || fail "$built was not generated"
  [ -f "$installed" ] || fail "$page.1 was not installed under share/man/man1"
  cmp -s "$built" "$installed" || fail "installed $page.1 differs from the built one"
  local help text
  help=$(timeout 60 "$@" --help)
  MANWIDTH=80 MANPAGER=cat timeout 60 man -l "$installed" >"$tmp/page.txt" 2>"$tmp/man.err"
  [ ! -s "$tmp/man.err" ] || { cat "$tmp/man.err"; fail "man -l $page.1 complained"; }
  text=$(cat "$tmp/page.txt")
  for section in NAME SYNOPSIS OPTIONS EXAMPLES "SEE ALSO"; do
    grep -q "^$section\$" <<<"$text" || fail "$page.1 has no $section section"
  done
  grep -Eq "^       $page +- +[A-Za-z]" <<<"$text" || fail "$page.1: NAME line is not '$page - summary'"
  grep -q "^$page $version " <<<"$text" || fail "$page.1 does not carry version $version"
  # Every option of the help's option lines, as a tag at the start of a line.
  local opts opt n=0
  opts=$(grep -E '^ +-' <<<"$help" | grep -oE -- '--[a-z][a-z0-9-]*' | sort -u)
  [ -n "$opts" ] || fail "$* --help lists no options"
  for opt in $opts; do
    grep -Eq -- "^ +(-[a-zA-Z],)?$opt( |,|=|$)" <<<"$text" || fail "$page.1 does not list $opt"
    n=$((n + 1))
  done
  # The help's example lines, each on a line of its own in EXAMPLES.
  local examples line
  examples=$(awk '/^Examples:/ {f = 1; next} f && /^  [a-z]/ {sub(/^ +/, ""); print}' <<<"$help")
  [ -n "$examples" ] || fail "$* --help has no examples"
  while IFS= read -r line; do
    awk '/^EXAMPLES$/ {f = 1; next} /^[A-Z]/ {f = 0} f {sub(/^ +/, ""); print}' "$tmp/page.txt" \
      | grep -qxF -- "$line" || fail "$page.1: example '$line' is not a line of its own in EXAMPLES"
  done <<<"$examples"
  echo "ok: $page.1: built, installed, renders; $n options and the examples listed"
}

check_page lodestone "$LODESTONE"
for s in $subcommands; do
  check_page "lodestone-$s" "$LODESTONE" "$s"
done
echo "man_pages: all checks passed"
