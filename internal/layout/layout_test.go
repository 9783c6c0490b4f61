package layout_test

import (
	"os"
	"os/exec"
	"path/filepath"
	"slices"
	"strings"
	"testing"
)

// deps lists the packages that pkgs import, directly or not, with go list.
func deps(t *testing.T, pkgs ...string) []string {
	t.Helper()
	args := append([]string{"list", "-deps"}, pkgs...)
	out, err := exec.Command("go", args...).Output()
	if err != nil {
		t.Skipf("go list is not available here: %v", err)
	}
	return strings.Fields(string(out))
}

// TestImportDirection checks the rules of DEVELOPERS.md's layout section.
func TestImportDirection(t *testing.T) {
	for _, tc := range []struct {
		name      string
		pkgs      []string
		forbidden []string // prefixes of import paths none of pkgs may reach
	}{
		{"the core needs no Arrow", []string{"deltafit/fit", "deltafit/evaluate/...", "deltafit/ingest/tabular", "deltafit/ingest/encode"},
			[]string{"github.com/apache/arrow-go", "github.com/spf13/cobra", "github.com/olekukonko/tablewriter"}},
		{"fit needs only the standard library and gonum", []string{"deltafit/fit"},
			[]string{"deltafit/ingest", "deltafit/evaluate", "deltafit/export"}},
		{"only cmd imports cobra", []string{"deltafit/ingest/...", "deltafit/export/...", "deltafit/internal/..."},
			[]string{"github.com/spf13/cobra"}},
		{"the man page generator stays out of the binary", []string{"deltafit/cmd/deltafit"},
			[]string{"github.com/spf13/cobra/doc", "github.com/cpuguy83/go-md2man"}},
		{"only export imports tablewriter", []string{"deltafit/ingest/...", "deltafit/evaluate/...", "deltafit/fit/..."},
			[]string{"github.com/olekukonko/tablewriter"}},
		{"only export draws plots", []string{"deltafit/ingest/...", "deltafit/evaluate/...", "deltafit/fit/..."},
			[]string{"gonum.org/v1/plot"}},
	} {
		t.Run(tc.name, func(t *testing.T) {
			for _, dep := range deps(t, tc.pkgs...) {
				for _, bad := range tc.forbidden {
					if strings.HasPrefix(dep, bad) {
						t.Errorf("%v reaches %s", tc.pkgs, dep)
					}
				}
			}
		})
	}
}

// moduleVersions lists the module of every package ./... builds and tests,
// with its version, as go list gives them with GOWORK set to work.
func moduleVersions(t *testing.T, work string) string {
	t.Helper()
	cmd := exec.Command("go", "list", "-deps", "-test", "-f", "{{with .Module}}{{.Path}} {{.Version}}{{end}}", "./...")
	cmd.Dir = "../.."
	cmd.Env = append(os.Environ(), "GOWORK="+work)
	out, err := cmd.Output()
	if err != nil {
		t.Skipf("go list is not available here: %v", err)
	}
	lines := strings.Fields(strings.ReplaceAll(string(out), " ", "@"))
	slices.Sort(lines)
	return strings.Join(slices.Compact(lines), "\n")
}

// The workspace that joins the Beam module must not change what the root
// module builds: its packages get the same module versions with go.work
// as without (DEVELOPERS.md, Testing).
func TestWorkspaceKeepsVersions(t *testing.T) {
	if testing.Short() {
		t.Skip("runs go list twice")
	}
	work, err := filepath.Abs("../../go.work")
	if err != nil {
		t.Fatal(err)
	}
	with, without := moduleVersions(t, work), moduleVersions(t, "off")
	if with != without {
		t.Errorf("module versions differ with go.work:\n%s\nwithout:\n%s", with, without)
	}
}
