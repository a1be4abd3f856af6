#!/usr/bin/env bash
# Kill rate per file from a cargo-mutants output folder, as a Markdown
# table: scripts/mutants-summary.sh target/mutants-run/mutants.out
# Kill rate = caught / (caught + missed + timeout); unviable mutants (that
# do not build) are counted apart and do not enter the rate.
set -euo pipefail
dir="${1:?usage: mutants-summary.sh MUTANTS_OUT_DIR}"
count() { # file, list
    if [ -f "$dir/$2.txt" ]; then grep -c "^$1:" "$dir/$2.txt" || true; else echo 0; fi
}
files=$(cat "$dir"/caught.txt "$dir"/missed.txt "$dir"/timeout.txt "$dir"/unviable.txt 2>/dev/null \
    | cut -d: -f1 | sort -u)
echo "| file | caught | missed | timeout | unviable | kill rate |"
echo "|---|---:|---:|---:|---:|---:|"
for f in $files; do
    c=$(count "$f" caught); m=$(count "$f" missed); t=$(count "$f" timeout); u=$(count "$f" unviable)
    n=$((c + m + t))
    rate=$(if [ "$n" -gt 0 ]; then awk -v c="$c" -v n="$n" 'BEGIN { printf "%.0f %%", 100 * c / n }'; else echo "n/a"; fi)
    echo "| \`$f\` | $c | $m | $t | $u | $rate |"
done
