package encode

import (
	"errors"
	"fmt"
	"slices"
	"strconv"

	"deltafit/ingest/tabular"
)

// The encoding of a categorical column: one unit per category seen at
// least MIN times on the training rows, then an "other" unit for the rest.

var _ = register(tabular.Categorical, OneHot, categories{})

type categories struct{}

func (categories) parse(e *Encoding, arg string, hasArg bool) error {
	e.Min = 1
	if hasArg {
		k, err := strconv.Atoi(arg)
		if err != nil || k < 1 {
			return errors.New("MIN must be a whole number of at least 1")
		}
		e.Min = k
	}
	return nil
}

func (categories) fit(f *Feature, s *Summary, e Encoding) error {
	least := max(1, e.Min)
	for c, n := range s.Counts {
		if n >= least {
			f.Categories = append(f.Categories, c)
		}
	}
	if len(f.Categories) > MaxCategories {
		return fmt.Errorf("%d distinct values reach the least count %d, over the cap of %d per categorical column; is it an identifier to ignore, or should rare values share the other unit (a higher MIN)?",
			len(f.Categories), least, MaxCategories)
	}
	slices.Sort(f.Categories)
	return nil
}

func (categories) valueUnits(f *Feature) int { return len(f.Categories) + 1 }

func (categories) unitNames(f *Feature) []string {
	names := make([]string, 0, len(f.Categories)+1)
	for _, c := range f.Categories {
		names = append(names, f.Column+"="+c)
	}
	return append(names, f.Column+"=(other)")
}

func (categories) encode(f *Feature, units []float64, col *tabular.Column, row int, stats *Stats) {
	i, found := slices.BinarySearch(f.Categories, col.Text[row])
	if !found {
		i = len(f.Categories)
		stats.add(&stats.Other, f.Column, row)
	}
	units[i] = 1
}

func (categories) validate(f *Feature) error {
	if len(f.Categories) > MaxCategories {
		return fmt.Errorf("%d categories, over the cap of %d", len(f.Categories), MaxCategories)
	}
	for i := 1; i < len(f.Categories); i++ {
		if f.Categories[i] <= f.Categories[i-1] {
			return errors.New("categories must be sorted and distinct")
		}
	}
	return nil
}
