package separate

import (
	"cmp"
	"context"
	"math"
	"slices"
)

// A certificate read off the hull program of the whole split has as many
// rows as the inputs that vary where the hulls meet, up to D+2: on 0/1
// patterns often dozens. Hulls often also meet among a few rows that are
// close to each other, and a hull program on those rows alone has only the
// inputs that vary among them: its certificate is small, and holds for the
// whole split (a subset's hull lies inside the whole hull).

// Neighbourhood search sizes: at most shrinkAnchors rows of the certificate
// are tried as anchors, the heaviest first, each with its nearest
// neighbourhoodSizes rows of each side in turn; the search spends at most
// shrinkPivots pivots of the split's budget.
const (
	shrinkAnchors = 8
	shrinkPivots  = 500
)

var neighbourhoodSizes = []int{3, 6, 12, 24}

// shrinkCertificate returns a certificate with fewer rows than c found in
// the neighbourhood of one of its rows, or c. pos and neg are the distinct
// rows of the split (0-based); active its varying inputs. The pivots it
// spends count against budget.
func shrinkCertificate(ctx context.Context, p Points, active, pos, neg []int, c *Certificate, budget *pivotBudget, seed uint64) *Certificate {
	best := c
	anchors := make([]int, len(c.Rows))
	for i := range anchors {
		anchors[i] = i
	}
	slices.SortStableFunc(anchors, func(a, b int) int { return cmp.Compare(c.Weights[b], c.Weights[a]) })
	allowance := &pivotBudget{limit: shrinkPivots}
	if budget.limit > 0 {
		allowance.limit = min(shrinkPivots, budget.limit-budget.pivots)
	}
	if allowance.limit <= 0 {
		return c
	}
	defer func() { budget.pivots += allowance.pivots }()
	for _, i := range anchors[:min(shrinkAnchors, len(anchors))] {
		anchor := p.Row(c.Rows[i] - 1)
		nearPos, nearNeg := nearest(p, active, anchor, pos), nearest(p, active, anchor, neg)
		for _, k := range neighbourhoodSizes {
			if 2*k >= len(best.Rows) || allowance.pivots >= allowance.limit {
				break
			}
			localPos, localNeg := sorted(nearPos[:min(k, len(nearPos))]), sorted(nearNeg[:min(k, len(nearNeg))])
			local := varying(p, localPos, localNeg)
			h := newHullSearch(ctx, p, local, allowance, seed)
			found, _, err := h.run(localPos, localNeg)
			if err != nil || found == nil {
				continue
			}
			if found = reduceCertificate(p, local, found); len(found.Rows) < len(best.Rows) {
				best = found
				break
			}
		}
	}
	return best
}

// nearest returns rows ordered by L1 distance from x over the inputs
// active, the nearest first (the earlier row first among equals).
func nearest(p Points, active []int, x []float64, rows []int) []int {
	type near struct {
		row      int
		distance float64
	}
	order := make([]near, len(rows))
	for i, r := range rows {
		d, row := 0.0, p.Row(r)
		for _, j := range active {
			d += math.Abs(row[j] - x[j])
		}
		order[i] = near{r, d}
	}
	slices.SortStableFunc(order, func(a, b near) int { return cmp.Compare(a.distance, b.distance) })
	out := make([]int, len(rows))
	for i, n := range order {
		out[i] = n.row
	}
	return out
}

func sorted(rows []int) []int {
	out := slices.Clone(rows)
	slices.Sort(out)
	return out
}
