#!/usr/bin/env bash
# The manual pages and the bash completion generated at build time (packaging/docgen) against
# what the binary's own --help says: a page for habcast and for every command --help lists, every
# option of a command's --help in its page, pages that render without a warning from man/groff,
# and a completion that completes commands, options and option choices.
# Usage: manual_and_completion.sh HABCAST GENERATED_DIR. Exit 77 (skipped) without man(1).
set -euo pipefail
# Note: no `producer | grep -q` under pipefail (grep quits early, the producer dies of SIGPIPE
# and the pipeline fails at random); text goes into variables first.
habcast=$1
gen=$2
fail() { echo "FAIL: $*" >&2; exit 1; }
command -v man >/dev/null || { echo "SKIP: man (man-db) is not installed" >&2; exit 77; }

# Commands as the top-level --help lists them (the indented names under "Subcommands:").
mapfile -t commands < <("$habcast" --help | awk '/^Subcommands:/ {on = 1; next} on && /^  [a-z]/ {print $1}')
((${#commands[@]} >= 5)) || fail "expected at least 5 commands in habcast --help, got: ${commands[*]}"

check_page() {  # page file, help text
  local page=$1 help=$2
  [[ -f $page ]] || fail "no manual page $page"
  local source
  source=$(zcat "$page" | sed 's/\\-/-/g')
  # Every option word of --help (-c, --covariate, ...) appears in the page.
  local word
  while read -r word; do
    grep -qF -- "$word" <<<"$source" || fail "$page lacks $word, which --help lists"
  done < <(grep -oE '^  (-[A-Za-z0-9],)?--?[A-Za-z0-9][-A-Za-z0-9]*(,--?[A-Za-z0-9][-A-Za-z0-9]*)*' <<<"$help" | tr ',' '\n' | tr -d ' ')
  # man renders it without warnings (bad macros, unknown escapes, lines it cannot fit).
  local warnings
  warnings=$(LC_ALL=C.UTF-8 MANWIDTH=80 man --warnings -E UTF-8 -l "$page" 2>&1 >/dev/null || true)
  [[ -z $warnings ]] || fail "man warns on $page: $warnings"
}

check_page "$gen/man1/habcast.1.gz" "$("$habcast" --help)"
for c in "${commands[@]}"; do
  help=$("$habcast" "$c" --help)
  check_page "$gen/man1/habcast-$c.1.gz" "$help"
  # The page's description is the command's help text after its options.
  first_footer_line=$(awk 'seen && NF {print; exit} /^Options:/ {o = 1} o && /^$/ {seen = 1}' <<<"$help")
  if [[ -n $first_footer_line ]]; then
    key=$(sed 's/^ *//; s/ *$//' <<<"$first_footer_line" | cut -c1-40)
    page_text=$(zcat "$gen/man1/habcast-$c.1.gz" | sed 's/\\-/-/g; s/\\e/\\/g')
    grep -qF -- "$key" <<<"$page_text" || fail "habcast-$c.1 lacks the help's text '$key'"
  fi
done
# No page for a command that --help does not list (a removed command's page must not linger).
for page in "$gen"/man1/*.1.gz; do
  name=$(basename "$page" .1.gz)
  [[ $name == habcast ]] && continue
  known=0
  for c in "${commands[@]}"; do [[ ${name#habcast-} == "$c" ]] && known=1; done
  ((known)) || fail "stale page $name for no command"
done

# Completion: run the generated function on typed words, print what it offers.
complete_words() {
  bash -c 'source "$1"; shift; COMP_WORDS=("$@"); COMP_CWORD=$((${#COMP_WORDS[@]} - 1)); _habcast; printf "%s\n" "${COMPREPLY[@]}"' \
    _ "$gen/habcast.bash-completion" "$@"
}
expect() {  # expected words (space separated) -- typed words
  local want=$1; shift
  local got
  got=$(complete_words "$@" | sort | tr '\n' ' ' | sed 's/ $//')
  [[ $got == "$want" ]] || fail "completing '$*': got '$got', want '$want'"
}
expect "predict" habcast pre
expect "$(printf '%s\n' "${commands[@]}" | sort | tr '\n' ' ' | sed 's/ $//')" habcast ""
expect "--overviews --overwrite" habcast predict model.toml --ov
expect "json text" habcast predict --log-format ""
expect "json" habcast batch m.toml --log-format = j
expect "" habcast predict -o  ""          # a folder: bash's default file names
expect "--overviews --overwrite" habcast predict -o fit --ov  # a value named like a command stays a value
expect "binomial" habcast fit --family bin
echo "manual pages for ${#commands[@]} commands and the completion agree with --help"
