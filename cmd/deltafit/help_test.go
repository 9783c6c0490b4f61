package main

import (
	"bytes"
	"context"
	"io"
	"strings"
	"testing"

	"github.com/spf13/cobra"
)

// Every command's help ends (not starts) with its exit status: after the
// description, the usage and the flags.
func TestHelpEndsWithExitStatus(t *testing.T) {
	paths := [][]string{{}, {"help"}}
	var walk func(c *cobra.Command, path []string)
	walk = func(c *cobra.Command, path []string) {
		for _, sub := range c.Commands() {
			p := append(append([]string(nil), path...), sub.Name())
			paths = append(paths, p)
			walk(sub, p)
		}
	}
	walk(newRootCmd(nil, io.Discard, io.Discard), nil)
	if len(paths) < 10 {
		t.Fatalf("only %d commands", len(paths))
	}
	for _, path := range paths {
		var out bytes.Buffer
		if code := run(context.Background(), append(path, "--help"), nil, &out, io.Discard); code != 0 {
			t.Fatalf("%v --help: exit %d", path, code)
		}
		help := out.String()
		i := strings.LastIndex(help, "\nExit status: 0 ok, 1 data or runtime error, 2 usage error")
		if i < 0 {
			t.Fatalf("%v --help has no exit status:\n%s", path, help)
		}
		if strings.Count(help, "Exit status:") != 1 {
			t.Errorf("%v --help gives its exit status more than once", path)
		}
		before, after := help[:i], help[i:]
		for _, part := range []string{"Usage:", "Flags:"} {
			if !strings.Contains(before, part) || strings.Contains(after, part) {
				t.Errorf("%v --help: %s is not before the exit status:\n%s", path, part, help)
			}
		}
		if !strings.HasSuffix(help, "\n") || strings.HasSuffix(help, "\n\n") {
			t.Errorf("%v --help does not end with one line break: %q", path, help[len(help)-20:])
		}
	}
}
