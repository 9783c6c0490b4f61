package main

import (
	"runtime/debug"
	"strings"
	"testing"
)

// The version line carries the module version and the VCS revision of the
// build information, and says "unknown" for what is not there.
func TestVersionFrom(t *testing.T) {
	info := &debug.BuildInfo{Main: debug.Module{Path: "deltafit", Version: "v0.1.0"},
		Settings: []debug.BuildSetting{{Key: "vcs", Value: "git"}, {Key: "vcs.revision", Value: "0123abc"}, {Key: "vcs.modified", Value: "true"}}}
	if got := versionFrom(info); !strings.HasSuffix(got, "; module v0.1.0, revision 0123abc (modified))") {
		t.Errorf("got %q", got)
	}
	if got := versionFrom(nil); !strings.HasSuffix(got, "; module unknown, revision unknown)") || !strings.HasPrefix(got, "deltafit 0.") {
		t.Errorf("without build information: %q", got)
	}
}
