package export_test

import (
	"bufio"
	"bytes"
	"errors"
	"io"
	"math/rand/v2"
	"os"
	"os/exec"
	"path/filepath"
	"runtime"
	"strconv"
	"strings"
	"testing"
	"time"

	"deltafit/export"
)

// killChildEnv makes the test binary a writer that the test kills.
const killChildEnv = "DELTAFIT_TEST_KILLED_WRITER"

// newContent is what the killed writer writes: 4 MiB in 64 KiB chunks,
// pausing between chunks so that kills land inside the write as well as
// in the sync and the rename.
func newContent() []byte { return bytes.Repeat([]byte("new content of the file\n"), 4<<20/24) }

func childWrite(path string) {
	content := newContent()
	err := export.WriteFile(path, func(w io.Writer) error {
		os.Stdout.WriteString("writing\n")
		for chunk := range slices(content, 64<<10) {
			if _, err := w.Write(chunk); err != nil {
				return err
			}
			time.Sleep(50 * time.Microsecond)
		}
		return nil
	})
	if err != nil {
		os.Exit(3)
	}
	os.Exit(0)
}

func slices(b []byte, n int) func(func([]byte) bool) {
	return func(yield func([]byte) bool) {
		for len(b) > 0 {
			k := min(n, len(b))
			if !yield(b[:k]) {
				return
			}
			b = b[k:]
		}
	}
}

// TestKilledWriteLeavesPreviousFile kills a writing process with SIGKILL at
// random moments 100 times. After every kill the file holds either all of
// the previous bytes or all of the new ones, never a mix, and any file
// left beside it is a killed writer's temporary file; the next successful
// WriteFile removes those.
func TestKilledWriteLeavesPreviousFile(t *testing.T) {
	if path := os.Getenv(killChildEnv); path != "" {
		childWrite(path)
	}
	if runtime.GOOS == "windows" || runtime.GOOS == "plan9" {
		t.Skip("needs SIGKILL")
	}
	exe, err := os.Executable()
	if err != nil {
		t.Fatal(err)
	}
	dir := t.TempDir()
	path := filepath.Join(dir, "model.json")
	previous := []byte("the previous, complete file\n")
	content := newContent()
	rng := rand.New(rand.NewPCG(4, 2026))
	const kills = 100
	midWrite := 0 // kills that left a temporary file
	for i := range kills {
		if err := os.WriteFile(path, previous, 0o644); err != nil {
			t.Fatal(err)
		}
		cmd := exec.Command(exe, "-test.run=^TestKilledWriteLeavesPreviousFile$")
		cmd.Env = append(os.Environ(), killChildEnv+"="+path)
		stdout, err := cmd.StdoutPipe()
		if err != nil {
			t.Fatal(err)
		}
		if err := cmd.Start(); err != nil {
			t.Fatal(err)
		}
		// Wait until the temporary file exists and the write has begun,
		// then kill within the next 0 to 12 ms.
		line, _ := bufio.NewReader(stdout).ReadString('\n')
		if line != "writing\n" {
			cmd.Process.Kill()
			cmd.Wait()
			t.Fatalf("kill %d: the child said %q", i, line)
		}
		time.Sleep(time.Duration(rng.IntN(12_000)) * time.Microsecond)
		cmd.Process.Kill() // SIGKILL on Unix
		cmd.Wait()

		got, err := os.ReadFile(path)
		if err != nil {
			t.Fatalf("kill %d: %v", i, err)
		}
		if !bytes.Equal(got, previous) && !bytes.Equal(got, content) {
			t.Fatalf("kill %d: the file holds %d bytes that are neither the previous nor the new content", i, len(got))
		}
		entries, _ := os.ReadDir(dir)
		for _, e := range entries {
			if e.Name() == "model.json" {
				continue
			}
			if !strings.HasPrefix(e.Name(), ".model.json.tmp-") {
				t.Fatalf("kill %d: unexpected file %s", i, e.Name())
			}
			if strings.HasPrefix(e.Name(), ".model.json.tmp-"+strconv.Itoa(cmd.Process.Pid)+"-") {
				midWrite++
			}
		}
	}
	// The kills must have caught writers mid-write, or the test shows
	// nothing about partial files.
	if midWrite == 0 {
		t.Fatalf("none of %d kills landed during a write", kills)
	}
	if err := export.WriteFile(path, func(w io.Writer) error { _, err := w.Write(previous); return err }); err != nil {
		t.Fatal(err)
	}
	entries, _ := os.ReadDir(dir)
	if len(entries) != 1 {
		var names []string
		for _, e := range entries {
			names = append(names, e.Name())
		}
		t.Fatalf("after a successful write the directory holds %v, want only model.json", names)
	}
	t.Logf("%d of %d kills left a killed writer's temporary file, removed by the next write", midWrite, kills)
}

// TestWriteFileFailureLeavesNothing checks the other half of atomicity: a
// write that fails leaves the previous file and no temporary file.
func TestWriteFileFailureLeavesNothing(t *testing.T) {
	dir := t.TempDir()
	path := filepath.Join(dir, "predictions.csv")
	previous := []byte("row,predicted\n1,a\n")
	if err := os.WriteFile(path, previous, 0o644); err != nil {
		t.Fatal(err)
	}
	boom := errors.New("boom")
	err := export.WriteFile(path, func(w io.Writer) error {
		w.Write(bytes.Repeat([]byte("x"), 1<<20))
		return boom
	})
	if !errors.Is(err, boom) {
		t.Fatalf("error %v, want the write's own error", err)
	}
	if got, _ := os.ReadFile(path); !bytes.Equal(got, previous) {
		t.Fatal("the failed write changed the file")
	}
	if entries, _ := os.ReadDir(dir); len(entries) != 1 {
		t.Fatalf("the failed write left %d files", len(entries))
	}
}

// TestWriteFileKeepsLiveWritersTemp checks that the cleanup removes only
// temporary files of writers that no longer run.
func TestWriteFileKeepsLiveWritersTemp(t *testing.T) {
	dir := t.TempDir()
	path := filepath.Join(dir, "m.json")
	// Process 1 (init) always runs; a huge id never does on Linux, whose
	// pid_max is at most 2^22.
	live := filepath.Join(dir, ".m.json.tmp-1-123")
	dead := filepath.Join(dir, ".m.json.tmp-2147483646-456")
	other := filepath.Join(dir, ".other.json.tmp-2147483646-789")
	for _, p := range []string{live, dead, other} {
		if err := os.WriteFile(p, []byte("partial"), 0o644); err != nil {
			t.Fatal(err)
		}
	}
	if err := export.WriteFile(path, func(w io.Writer) error { _, err := io.WriteString(w, "{}\n"); return err }); err != nil {
		t.Fatal(err)
	}
	for _, tc := range []struct {
		path string
		kept bool
	}{{live, true}, {dead, runtime.GOOS == "windows"}, {other, true}} {
		_, err := os.Stat(tc.path)
		if kept := err == nil; kept != tc.kept {
			t.Errorf("%s: kept %v, want %v", filepath.Base(tc.path), kept, tc.kept)
		}
	}
}
