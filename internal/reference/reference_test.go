package reference

import "testing"

// Every reference case passes on this installation; each case names its
// source in the Source field.
func TestEveryCasePasses(t *testing.T) {
	cases, err := Run()
	if err != nil {
		t.Fatal(err)
	}
	if len(cases) < 10 {
		t.Fatalf("only %d cases ran", len(cases))
	}
	for _, c := range cases {
		if c.Source == "" {
			t.Errorf("%s: no source", c.Name)
		}
		if !c.Pass {
			t.Errorf("%s (%s): expected %s, got %s", c.Name, c.Source, c.Expected, c.Got)
		}
	}
}
