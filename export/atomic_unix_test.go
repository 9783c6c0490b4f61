//go:build unix

package export

import (
	"bufio"
	"bytes"
	"errors"
	"fmt"
	"io"
	"io/fs"
	"os"
	"os/exec"
	"path/filepath"
	"strconv"
	"strings"
	"syscall"
	"testing"
	"time"
)

func writeString(s string) func(io.Writer) error {
	return func(w io.Writer) error { _, err := io.WriteString(w, s); return err }
}

// entries lists the names in dir.
func entries(t *testing.T, dir string) []string {
	t.Helper()
	list, err := os.ReadDir(dir)
	if err != nil {
		t.Fatal(err)
	}
	var names []string
	for _, e := range list {
		names = append(names, e.Name())
	}
	return names
}

// TestWriteFileDevices writes to character devices: they stay devices,
// and no temporary file is made beside them.
func TestWriteFileDevices(t *testing.T) {
	before := entries(t, "/dev")
	if err := WriteFile("/dev/null", writeString("model\n")); err != nil {
		t.Fatal(err)
	}
	info, err := os.Stat("/dev/null")
	if err != nil || info.Mode()&fs.ModeCharDevice == 0 {
		t.Fatalf("/dev/null is no longer a character device: %v %v", info.Mode(), err)
	}
	if after := entries(t, "/dev"); len(after) != len(before) {
		t.Fatalf("/dev held %d entries before the write and %d after", len(before), len(after))
	}
	// /dev/full fails every write with ENOSPC (Linux null(4)): the error
	// names the path and the cause.
	if _, err := os.Stat("/dev/full"); err != nil {
		t.Skip("no /dev/full")
	}
	err = WriteFile("/dev/full", writeString("model\n"))
	if err == nil || err.Error() != "export: cannot write /dev/full: "+syscall.ENOSPC.Error() {
		t.Fatalf("error %v, want one naming /dev/full and ENOSPC", err)
	}
	if !errors.Is(err, syscall.ENOSPC) {
		t.Fatalf("error %v does not wrap ENOSPC", err)
	}
}

// TestWriteFileDescriptorPaths writes to /proc/self/fd/N and /dev/fd/N of
// a pipe, and to a symbolic link to one: the bytes arrive in the pipe and
// the link stays a link.
func TestWriteFileDescriptorPaths(t *testing.T) {
	r, w, err := os.Pipe()
	if err != nil {
		t.Fatal(err)
	}
	defer r.Close()
	defer w.Close()
	link := filepath.Join(t.TempDir(), "out")
	fd := strconv.Itoa(int(w.Fd()))
	if err := os.Symlink("/proc/self/fd/"+fd, link); err != nil {
		t.Fatal(err)
	}
	paths := []string{"/proc/self/fd/" + fd, "/dev/fd/" + fd, link}
	for _, p := range paths {
		if _, err := os.Stat(p); err != nil {
			t.Skipf("%s: %v", p, err)
		}
	}
	br := bufio.NewReader(r)
	for _, p := range paths {
		if err := WriteFile(p, writeString(p+"\n")); err != nil {
			t.Fatalf("%s: %v", p, err)
		}
		line, err := br.ReadString('\n')
		if err != nil || line != p+"\n" {
			t.Fatalf("%s: the pipe got %q (%v)", p, line, err)
		}
	}
	if info, err := os.Lstat(link); err != nil || info.Mode()&fs.ModeSymlink == 0 {
		t.Fatalf("the link was replaced: %v %v", info.Mode(), err)
	}
}

// TestWriteFileFIFO writes through a named pipe, which stays one.
func TestWriteFileFIFO(t *testing.T) {
	fifo := filepath.Join(t.TempDir(), "fifo")
	if err := syscall.Mkfifo(fifo, 0o600); err != nil {
		t.Skip(err)
	}
	got := make(chan string)
	go func() {
		b, _ := os.ReadFile(fifo) // blocks until the writer opens it
		got <- string(b)
	}()
	if err := WriteFile(fifo, writeString("row,predicted\n")); err != nil {
		t.Fatal(err)
	}
	if s := <-got; s != "row,predicted\n" {
		t.Fatalf("the reader got %q", s)
	}
	if info, err := os.Lstat(fifo); err != nil || info.Mode()&fs.ModeNamedPipe == 0 {
		t.Fatalf("the FIFO was replaced: %v %v", info.Mode(), err)
	}
	if names := entries(t, filepath.Dir(fifo)); len(names) != 1 {
		t.Fatalf("the directory holds %v", names)
	}
}

// TestCheckWritableFIFO: the check made before any work leaves a named
// pipe's reader waiting for the output, not at an end of file.
func TestCheckWritableFIFO(t *testing.T) {
	fifo := filepath.Join(t.TempDir(), "fifo")
	if err := syscall.Mkfifo(fifo, 0o600); err != nil {
		t.Skip(err)
	}
	got := make(chan string, 1)
	go func() {
		b, _ := os.ReadFile(fifo)
		got <- string(b)
	}()
	wrote := make(chan error, 1)
	go func() {
		if err := CheckWritable(fifo); err != nil {
			wrote <- err
			return
		}
		time.Sleep(200 * time.Millisecond) // the work done between the check and the write
		wrote <- WriteFile(fifo, writeString("row,predicted\n"))
	}()
	select {
	case err := <-wrote:
		if err != nil {
			t.Fatal(err)
		}
	case <-time.After(20 * time.Second):
		t.Fatal("the write found no reader: the check ended the reader's input")
	}
	if s := <-got; s != "row,predicted\n" {
		t.Fatalf("the reader got %q", s)
	}
}

// TestWriteFileSymlink replaces the regular file a link names and keeps
// the link.
func TestWriteFileSymlink(t *testing.T) {
	dir := t.TempDir()
	target := filepath.Join(dir, "models", "v3.json")
	if err := os.Mkdir(filepath.Dir(target), 0o755); err != nil {
		t.Fatal(err)
	}
	if err := os.WriteFile(target, []byte("old\n"), 0o600); err != nil {
		t.Fatal(err)
	}
	link := filepath.Join(dir, "model.json")
	if err := os.Symlink("models/v3.json", link); err != nil {
		t.Fatal(err)
	}
	if err := WriteFile(link, writeString("new\n")); err != nil {
		t.Fatal(err)
	}
	if b, _ := os.ReadFile(target); string(b) != "new\n" {
		t.Fatalf("the link's target holds %q", b)
	}
	if info, err := os.Lstat(link); err != nil || info.Mode()&fs.ModeSymlink == 0 {
		t.Fatalf("the link was replaced: %v %v", info.Mode(), err)
	}
	if info, _ := os.Stat(target); info.Mode().Perm() != 0o600 {
		t.Fatalf("the target's mode is %v, want 0600 kept", info.Mode().Perm())
	}
}

// TestWriteFilePermissions: a new file's mode is 0666 less the umask, and
// an existing file keeps its mode, whatever the umask.
func TestWriteFilePermissions(t *testing.T) {
	old := syscall.Umask(0o022)
	defer syscall.Umask(old)
	dir := t.TempDir()
	for _, c := range []struct {
		umask    int
		existing fs.FileMode // 0: a new file
		want     fs.FileMode
	}{
		{0o022, 0, 0o644},
		{0o077, 0, 0o600},
		{0o002, 0, 0o664},
		{0o022, 0o600, 0o600},
		{0o077, 0o664, 0o664},
		{0o000, 0o640, 0o640},
	} {
		t.Run(fmt.Sprintf("umask %03o existing %03o", c.umask, c.existing), func(t *testing.T) {
			path := filepath.Join(dir, fmt.Sprintf("out-%03o-%03o", c.umask, c.existing))
			if c.existing != 0 {
				if err := os.WriteFile(path, []byte("old\n"), 0o600); err != nil {
					t.Fatal(err)
				}
				if err := os.Chmod(path, c.existing); err != nil {
					t.Fatal(err)
				}
			}
			syscall.Umask(c.umask)
			err := WriteFile(path, writeString("new\n"))
			syscall.Umask(0o022)
			if err != nil {
				t.Fatal(err)
			}
			info, err := os.Stat(path)
			if err != nil {
				t.Fatal(err)
			}
			if info.Mode().Perm() != c.want {
				t.Fatalf("mode %03o, want %03o", info.Mode().Perm(), c.want)
			}
		})
	}
}

// TestPathWriterNamesThePath: a failing write to the temporary file is
// reported as a failure of the user's path.
func TestPathWriterNamesThePath(t *testing.T) {
	f, err := os.CreateTemp(t.TempDir(), ".out.tmp-")
	if err != nil {
		t.Fatal(err)
	}
	f.Close() // writes now fail with a *fs.PathError naming f
	_, err = pathWriter{f, "predictions.csv"}.Write([]byte("x"))
	var pe *fs.PathError
	if !errors.As(err, &pe) || pe.Path != "predictions.csv" || strings.Contains(err.Error(), ".tmp-") {
		t.Fatalf("error %v, want a *fs.PathError for predictions.csv", err)
	}
	got := writeError("predictions.csv", err)
	if want := "export: cannot write predictions.csv: " + os.ErrClosed.Error(); got.Error() != want {
		t.Fatalf("error %q, want %q", got, want)
	}
}

// signalChildEnv makes the test binary a writer that waits for a signal
// in the middle of a WriteFile.
const signalChildEnv = "DELTAFIT_TEST_SIGNALLED_WRITER"

// TestSignalRemovesTemp sends SIGINT and SIGTERM to a writer that called
// CleanUpOnSignal, in the middle of a write: it exits with 130 or 143 and
// leaves the previous file alone and no temporary file.
func TestSignalRemovesTemp(t *testing.T) {
	if path := os.Getenv(signalChildEnv); path != "" {
		CleanUpOnSignal()
		WriteFile(path, func(w io.Writer) error {
			io.WriteString(w, strings.Repeat("partial\n", 1<<14))
			w.(*bufio.Writer).Flush()
			os.Stdout.WriteString("writing\n")
			select {} // until the signal
		})
		os.Exit(0)
	}
	exe, err := os.Executable()
	if err != nil {
		t.Fatal(err)
	}
	for _, c := range []struct {
		sig  syscall.Signal
		code int
	}{{syscall.SIGINT, ExitInterrupted}, {syscall.SIGTERM, ExitTerminated}} {
		t.Run(c.sig.String(), func(t *testing.T) {
			dir := t.TempDir()
			path := filepath.Join(dir, "model.json")
			if err := os.WriteFile(path, []byte("previous\n"), 0o644); err != nil {
				t.Fatal(err)
			}
			cmd := exec.Command(exe, "-test.run=^TestSignalRemovesTemp$")
			cmd.Env = append(os.Environ(), signalChildEnv+"="+path)
			stdout, err := cmd.StdoutPipe()
			if err != nil {
				t.Fatal(err)
			}
			if err := cmd.Start(); err != nil {
				t.Fatal(err)
			}
			line, _ := bufio.NewReader(stdout).ReadString('\n')
			if line != "writing\n" {
				cmd.Process.Kill()
				cmd.Wait()
				t.Fatalf("the child said %q", line)
			}
			if names := entries(t, dir); len(names) != 2 {
				t.Fatalf("mid-write the directory holds %v, want the file and a temporary file", names)
			}
			cmd.Process.Signal(c.sig)
			err = cmd.Wait()
			var exit *exec.ExitError
			if !errors.As(err, &exit) || exit.ExitCode() != c.code {
				t.Fatalf("the child ended with %v, want exit status %d", err, c.code)
			}
			if names := entries(t, dir); len(names) != 1 {
				t.Fatalf("after the signal the directory holds %v, want only model.json", names)
			}
			if b, _ := os.ReadFile(path); !bytes.Equal(b, []byte("previous\n")) {
				t.Fatalf("the file holds %q", b)
			}
		})
	}
}
