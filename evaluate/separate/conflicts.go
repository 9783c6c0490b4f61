package separate

import (
	"slices"
)

// Conflicts are groups of rows with identical patterns but different
// classes. No classifier that sees only the patterns can get every row of
// such a group right: at best it predicts the group's most common class,
// so it errs on the rest of the group.
type Conflicts struct {
	Count int `json:"count"` // conflicting groups
	Rows  int `json:"rows"`  // rows in conflicting groups
	// MinErrors is the least number of errors any classifier of these
	// patterns makes: Σ over groups of (group size − largest class count).
	MinErrors int `json:"min_errors"`
	// ErrorFloor is MinErrors / rows of the data: the irreducible error
	// rate of any classifier on this encoding.
	ErrorFloor float64 `json:"error_floor"`
	// Groups are the first conflicting groups, in order of their first row.
	Groups []ConflictGroup `json:"groups"`
}

// ConflictGroup is one set of rows sharing a pattern.
type ConflictGroup struct {
	Rows   []int    `json:"rows"`   // 1-based, ascending
	Labels []string `json:"labels"` // the class of each row
}

// FindConflicts groups the rows of p by pattern and reports the groups
// holding more than one class, listing at most the first most of them.
// classes are the class indexes of the rows, into labels; keep, when not
// nil, marks the rows to look at (the others are left out).
func FindConflicts(p Points, classes []int, labels []string, keep []bool, most int) Conflicts {
	c := Conflicts{Groups: []ConflictGroup{}}
	var rows []int
	for r := range classes {
		if keep == nil || keep[r] {
			rows = append(rows, r)
		}
	}
	counts := make([]int, len(labels))
	for _, group := range groupRows(rows, func(r int) string {
		if p.Width == 0 {
			return ""
		}
		return patternKey(p.Row(r))
	}) {
		clear(counts)
		for _, r := range group {
			counts[classes[r]]++
		}
		if slices.Max(counts) == len(group) {
			continue
		}
		c.Count++
		c.Rows += len(group)
		c.MinErrors += len(group) - slices.Max(counts)
		if len(c.Groups) < most {
			g := ConflictGroup{}
			for _, r := range group {
				g.Rows = append(g.Rows, r+1)
				g.Labels = append(g.Labels, labels[classes[r]])
			}
			c.Groups = append(c.Groups, g)
		}
	}
	if len(rows) > 0 {
		c.ErrorFloor = float64(c.MinErrors) / float64(len(rows))
	}
	return c
}

// groupRows groups rows (ascending) by key, in order of each group's first
// row, each group's rows ascending.
func groupRows(rows []int, key func(row int) string) [][]int {
	index := map[string]int{}
	var groups [][]int
	for _, r := range rows {
		k := key(r)
		g, seen := index[k]
		if !seen {
			g = len(groups)
			index[k] = g
			groups = append(groups, nil)
		}
		groups[g] = append(groups[g], r)
	}
	return groups
}
