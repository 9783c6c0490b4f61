#!/bin/sh
# spread.sh: the default fit's pooled 10-fold accuracy on each open dataset
# for seeds 1 to 10, its mean and standard deviation, and the ratio of that
# deviation to base R's over the same seeds (reference.csv, whose model
# does not depend on the seed: its spread is the folds' alone).
#
# Run on demand only (a few minutes; tests never run it). Needs jq and awk.
# Usage, from the repository's root:
#   sh testdata/open/spread.sh [DATASET...]
# with DATASET among iris crabs birthwt spam mlc_churn (default: all), and
# DELTAFIT naming the deltafit command (default: go run ./cmd/deltafit).
set -eu

here=$(cd "$(dirname "$0")" && pwd)
deltafit=${DELTAFIT:-"go run ./cmd/deltafit"}
[ $# -gt 0 ] || set -- iris crabs birthwt spam mlc_churn

for name in "$@"; do
	case $name in
	iris) file=$here/../iris.csv target=species ;;
	crabs) file=$here/crabs.csv target=species ;;
	birthwt) file=$here/birthwt.csv target=low ;;
	spam) file=$here/spam.csv target=type ;;
	mlc_churn) file=$here/mlc_churn.csv target=churn ;;
	*)
		echo "spread.sh: unknown dataset $name" >&2
		exit 2
		;;
	esac
	for seed in 1 2 3 4 5 6 7 8 9 10; do
		printf '%s,%s,' "$name" "$seed"
		$deltafit fit "$file" --target "$target" --folds 10 --seed "$seed" --format json | jq .cv.accuracy.pooled
	done
done | awk -F, -v ref="$here/reference.csv" '
	function sd(sum, sq, n,   v) { v = n > 1 ? (sq - sum * sum / n) / (n - 1) : 0; return v > 0 ? sqrt(v) : 0 }
	BEGIN {
		while ((getline line < ref) > 0) {
			split(line, f, ",")
			if (f[1] == "dataset") continue
			rs[f[1]] += f[3]; rq[f[1]] += f[3] * f[3]; rn[f[1]]++
		}
		print "dataset,deltafit_mean,deltafit_sd,base_r_mean,base_r_sd,ratio"
	}
	{
		if (!($1 in n)) order[++count] = $1
		s[$1] += $3; q[$1] += $3 * $3; n[$1]++
	}
	END {
		for (k = 1; k <= count; k++) {
			d = order[k]; ours = sd(s[d], q[d], n[d]); theirs = sd(rs[d], rq[d], rn[d])
			ratio = theirs > 0 ? sprintf("%.2f", ours / theirs) : "-"
			printf "%s,%.4f,%.5f,%.4f,%.5f,%s\n", d, s[d] / n[d], ours, rs[d] / rn[d], theirs, ratio
		}
	}'
