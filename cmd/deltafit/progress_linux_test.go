package main

import (
	"bytes"
	"context"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"strings"
	"sync"
	"syscall"
	"testing"
	"time"
	"unsafe"
)

// openPTY opens a pseudo-terminal and returns its controlling side and
// the terminal a program writes to.
func openPTY(t *testing.T) (control, tty *os.File) {
	t.Helper()
	control, err := os.OpenFile("/dev/ptmx", os.O_RDWR|syscall.O_NOCTTY, 0)
	if err != nil {
		t.Skipf("no pseudo-terminals here: %v", err)
	}
	var unlock int32
	if _, _, e := syscall.Syscall(syscall.SYS_IOCTL, control.Fd(), syscall.TIOCSPTLCK, uintptr(unsafe.Pointer(&unlock))); e != 0 {
		t.Skipf("cannot unlock the pseudo-terminal: %v", e)
	}
	var n uint32
	if _, _, e := syscall.Syscall(syscall.SYS_IOCTL, control.Fd(), syscall.TIOCGPTN, uintptr(unsafe.Pointer(&n))); e != 0 {
		t.Skipf("cannot name the pseudo-terminal: %v", e)
	}
	tty, err = os.OpenFile(fmt.Sprintf("/dev/pts/%d", n), os.O_RDWR|syscall.O_NOCTTY, 0)
	if err != nil {
		t.Skipf("cannot open the pseudo-terminal: %v", err)
	}
	return control, tty
}

// runOnTTY runs a command line with stderr on a pseudo-terminal and
// returns what the terminal showed and what went to stdout.
func runOnTTY(t *testing.T, args ...string) (shown, stdout string) {
	t.Helper()
	control, tty := openPTY(t)
	defer control.Close()
	var screen bytes.Buffer
	var wg sync.WaitGroup
	wg.Add(1)
	go func() {
		defer wg.Done()
		io.Copy(&screen, control) // ends with EIO once the terminal is closed
	}()
	var out bytes.Buffer
	if code := run(context.Background(), args, nil, &out, tty); code != 0 {
		t.Fatalf("%v: exit %d", args, code)
	}
	tty.Close()
	wg.Wait()
	return screen.String(), out.String()
}

// On a terminal, stderr shows progress bars for reading, epochs, folds and
// splits, and clears them; stdout never holds one. Into a file or a pipe
// (and with --quiet) stderr shows none.
func TestProgressOnTerminalOnly(t *testing.T) {
	defer func(size int64, every time.Duration) { progressMinBytes, progressThrottle = size, every }(progressMinBytes, progressThrottle)
	progressMinBytes, progressThrottle = 1, 0 // show every step of small, fast work
	dir := t.TempDir()
	// Iris 60 times over, about 270 kB: read in several steps.
	data, err := os.ReadFile(filepath.Join("..", "..", "testdata", "iris.csv"))
	if err != nil {
		t.Fatal(err)
	}
	header, rows, _ := strings.Cut(string(data), "\n")
	iris := filepath.Join(dir, "iris60.csv")
	if err := os.WriteFile(iris, []byte(header+"\n"+strings.Repeat(rows, 60)), 0o666); err != nil {
		t.Fatal(err)
	}
	model := filepath.Join(dir, "m.json")
	cases := []struct {
		args []string
		bars []string
	}{
		{[]string{"fit", iris, "--target", "species", "--numeric", "zscore", "--epochs", "20", "--folds", "3", "-o", model}, []string{"reading", "training: epochs", "cross-validation: folds"}},
		{[]string{"predict", "--model", model, iris, "-o", filepath.Join(dir, "p.csv")}, []string{"reading"}},
		{[]string{"check", iris, "--target", "species", "--space", "raw"}, []string{"reading", "check: split 1 of 3"}},
	}
	for _, tc := range cases {
		shown, stdout := runOnTTY(t, tc.args...)
		for _, bar := range tc.bars {
			if !strings.Contains(shown, bar) {
				t.Errorf("%v: the terminal shows no %q bar:\n%q", tc.args, bar, shown[:min(len(shown), 2000)])
			}
		}
		if !strings.Contains(shown, "\r") {
			t.Errorf("%v: no bar was drawn: %q", tc.args, shown)
		}
		if strings.ContainsAny(stdout, "\r█") {
			t.Errorf("%v: a bar went to stdout", tc.args)
		}
	}
	for _, tc := range cases {
		for _, quiet := range []bool{false, true} {
			args := tc.args
			if quiet {
				args = append(args[:len(args):len(args)], "--quiet")
			}
			errFile, err := os.Create(filepath.Join(dir, "stderr"))
			if err != nil {
				t.Fatal(err)
			}
			var out bytes.Buffer
			if code := run(context.Background(), args, nil, &out, errFile); code != 0 {
				t.Fatalf("%v: exit %d", args, code)
			}
			errFile.Close()
			if b, _ := os.ReadFile(errFile.Name()); len(b) != 0 {
				t.Errorf("%v with stderr in a file: %q", args, b)
			}
		}
	}
	if shown, _ := runOnTTY(t, append(cases[0].args, "--quiet")...); shown != "" {
		t.Errorf("--quiet on a terminal shows %q", shown)
	}
}
