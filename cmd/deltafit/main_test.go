package main

import (
	"context"
	"encoding/json"
	"fmt"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"github.com/rogpeppe/go-internal/testscript"
)

// TestMain lets the scripts run the real command as "deltafit".
func TestMain(m *testing.M) {
	testscript.Main(m, map[string]func(){
		"deltafit": func() { os.Exit(run(context.Background(), os.Args[1:], os.Stdin, os.Stdout, os.Stderr)) },
	})
}

// TestScripts runs testdata/script/*.txtar. Each script has the repo's
// testdata directory copied in as $WORK/data.
func TestScripts(t *testing.T) {
	data, err := filepath.Abs(filepath.Join("..", "..", "testdata"))
	if err != nil {
		t.Fatal(err)
	}
	testscript.Run(t, testscript.Params{
		Dir:                 filepath.Join("testdata", "script"),
		RequireExplicitExec: true,
		Cmds:                map[string]func(*testscript.TestScript, bool, []string){"jsonget": jsonget, "convert": convert, "readtable": readtable, "sumscores": sumscores},
		Setup: func(env *testscript.Env) error {
			env.Setenv("DATA", data)
			return nil
		},
	})
}

// jsonget FILE KEY... prints "KEY VALUE" for each dotted key of a JSON
// file, the value in compact JSON; a missing key fails the script.
func jsonget(ts *testscript.TestScript, neg bool, args []string) {
	if len(args) < 2 {
		ts.Fatalf("usage: jsonget FILE KEY...")
	}
	var doc any
	if err := json.Unmarshal([]byte(ts.ReadFile(args[0])), &doc); err != nil {
		ts.Fatalf("%s: %v", args[0], err)
	}
	for _, key := range args[1:] {
		v := doc
		for _, part := range strings.Split(key, ".") {
			obj, ok := v.(map[string]any)
			if !ok {
				v = nil
				break
			}
			v = obj[part]
		}
		if v == nil {
			if !neg {
				ts.Fatalf("%s: no key %s", args[0], key)
			}
			continue
		}
		b, _ := json.Marshal(v)
		fmt.Fprintf(ts.Stdout(), "%s %s\n", key, b)
	}
}
