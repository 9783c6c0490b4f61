package main

import (
	"reflect"
	"testing"

	"github.com/spf13/cobra"

	"deltafit/evaluate"
)

// fit without training flags learns with evaluate.DefaultLearner, the
// learner the open-data checks of package evaluate measure.
func TestDefaultFlagsGiveTheDefaultLearner(t *testing.T) {
	var f learnFlags
	cmd := &cobra.Command{Use: "fit"}
	f.add(cmd)
	if err := cmd.ParseFlags([]string{"--target", "species", "--seed", "7"}); err != nil {
		t.Fatal(err)
	}
	got, err := f.learner()
	if err != nil {
		t.Fatal(err)
	}
	want := evaluate.DefaultLearner(7)
	if !reflect.DeepEqual(got, want) {
		t.Errorf("flags give %+v,\nDefaultLearner %+v", got, want)
	}
}
