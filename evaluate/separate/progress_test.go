package separate_test

import (
	"slices"
	"testing"

	"deltafit/evaluate/separate"
	"deltafit/internal/refdata"
)

// Progress hears of each split decided: three against the rest and three
// pairs for Iris's three classes.
func TestCheckProgress(t *testing.T) {
	d, err := refdata.Iris()
	if err != nil {
		t.Fatal(err)
	}
	var done []int
	r, err := separate.Check(d, separate.CheckOptions{Space: separate.Raw, Pairs: true,
		Progress: func(n, total int) {
			if total != 6 {
				t.Fatalf("total %d, want 6", total)
			}
			done = append(done, n)
		}})
	if err != nil {
		t.Fatal(err)
	}
	if len(r.Splits) != 6 || !slices.Equal(done, []int{1, 2, 3, 4, 5, 6}) {
		t.Fatalf("%d splits, progress %v", len(r.Splits), done)
	}
}
