package export

import (
	"bufio"
	"crypto/rand"
	"encoding/hex"
	"errors"
	"fmt"
	"io"
	"io/fs"
	"os"
	"os/signal"
	"path/filepath"
	"strconv"
	"strings"
	"sync"
	"syscall"
)

// WriteFile writes the output file path with write.
//
// A regular file (or a new one) is written atomically: write fills a
// temporary file in the same directory, which is synced and renamed over
// path only if write and every later step succeed. On any failure the
// temporary file is removed and path is untouched. A new file's
// permissions follow the umask; an existing file keeps its permissions. A
// symbolic link is followed, and the file it names is replaced.
//
// Anything else is written through, not replaced: a device (/dev/null), a
// FIFO or socket, and the process's descriptor paths (/dev/stdout,
// /dev/fd/N, /proc/self/fd/N), which a shell may have opened for
// appending. Such a target gets the bytes as they are written, so a failed
// write may leave part of them there.
//
// Every error names path, never the temporary file.
//
// The temporary file is named .BASE.tmp-PID-RANDOM. While it exists it is
// registered, so that RemoveTemps (and CleanUpOnSignal's handler) can
// remove it. A writer killed outright (SIGKILL, power loss) leaves it
// behind; the next successful WriteFile of the same path removes every such
// file whose process no longer runs, and never one of a live writer.
func WriteFile(path string, write func(io.Writer) error) (err error) {
	target, info, through, err := outputTarget(path)
	if err != nil {
		return fmt.Errorf("export: cannot write %s: %w", path, unwrapPath(err))
	}
	if info != nil && info.IsDir() {
		return fmt.Errorf("export: cannot write %s: it is a directory; give a file name", path)
	}
	if through {
		return writeThrough(path, write)
	}
	perm := fs.FileMode(0o666) // reduced by the umask when created
	if info != nil {
		perm = info.Mode().Perm()
	}
	dir, base := filepath.Split(target)
	if dir == "" {
		dir = "."
	}
	tmp, err := createTemp(dir, base, perm)
	if err != nil {
		return fmt.Errorf("export: cannot write %s: %w", path, unwrapPath(err))
	}
	defer func() {
		if err != nil {
			tmp.Close()
			removeTemp(tmp.Name())
		}
	}()
	if info != nil {
		// The umask applied at creation; an existing file's mode is kept
		// exactly.
		if err = tmp.Chmod(perm); err != nil {
			return fmt.Errorf("export: cannot write %s: %w", path, unwrapPath(err))
		}
	}
	bw := bufio.NewWriterSize(pathWriter{tmp, path}, 64<<10)
	if err = write(bw); err != nil {
		return writeError(path, err)
	}
	if err = bw.Flush(); err != nil {
		return fmt.Errorf("export: cannot write %s: %w", path, unwrapPath(err))
	}
	if err = tmp.Sync(); err != nil {
		return fmt.Errorf("export: cannot write %s: %w", path, unwrapPath(err))
	}
	if err = tmp.Close(); err != nil {
		return fmt.Errorf("export: cannot write %s: %w", path, unwrapPath(err))
	}
	if err = renameTemp(tmp.Name(), target); err != nil {
		return fmt.Errorf("export: cannot write %s: %w", path, unwrapPath(err))
	}
	removeStale(dir, base)
	return nil
}

// writeThrough writes to an existing target that is not replaced.
// O_APPEND leaves alone what a shell's ">>" put there before, and what
// this process already wrote to its own standard output.
func writeThrough(path string, write func(io.Writer) error) error {
	f, err := os.OpenFile(path, os.O_WRONLY|os.O_APPEND, 0)
	if err != nil {
		return fmt.Errorf("export: cannot write %s: %w", path, unwrapPath(err))
	}
	bw := bufio.NewWriterSize(pathWriter{f, path}, 64<<10)
	err = write(bw)
	if err == nil {
		err = bw.Flush()
	}
	if cerr := f.Close(); err == nil && cerr != nil {
		err = cerr
	}
	return writeError(path, err)
}

// writeError returns the error of a write callback: a failure of the
// output file itself as "export: cannot write PATH: cause", any other
// error (the callback's own) as it is.
func writeError(path string, err error) error {
	var pe *fs.PathError
	if errors.As(err, &pe) && pe.Path == path {
		return fmt.Errorf("export: cannot write %s: %w", path, pe.Err)
	}
	return err
}

// maxLinks caps the symbolic links outputTarget follows, as Linux does.
const maxLinks = 40

// outputTarget follows path's symbolic links to the file they name,
// which need not exist, and returns it with its FileInfo (nil if it does
// not exist). through reports that the target is to be written through:
// it exists and is not a regular file, or the way to it passes a
// descriptor path.
func outputTarget(path string) (target string, info fs.FileInfo, through bool, err error) {
	target = path
	for range maxLinks {
		if descriptorPath(target) {
			return target, nil, true, nil
		}
		info, err := os.Lstat(target)
		if errors.Is(err, fs.ErrNotExist) {
			return target, nil, false, nil
		}
		if err != nil {
			return "", nil, false, err
		}
		if info.Mode()&fs.ModeSymlink == 0 {
			return target, info, !info.Mode().IsRegular() && !info.IsDir(), nil
		}
		link, err := os.Readlink(target)
		if err != nil {
			return "", nil, false, err
		}
		if !filepath.IsAbs(link) {
			link = filepath.Join(filepath.Dir(target), link)
		}
		target = link
	}
	return "", nil, false, errors.New("too many levels of symbolic links")
}

// descriptorPath reports whether p names one of a process's open file
// descriptors: /dev/stdin, /dev/stdout, /dev/stderr, /dev/fd/N, or
// /proc/PID/fd/N (/proc/self/fd/N).
func descriptorPath(p string) bool {
	p = filepath.Clean(p)
	switch p {
	case "/dev/stdin", "/dev/stdout", "/dev/stderr":
		return true
	}
	if strings.HasPrefix(p, "/dev/fd/") {
		return true
	}
	parts := strings.Split(p, "/") // "", "proc", PID, "fd", N
	return len(parts) == 5 && parts[1] == "proc" && parts[3] == "fd"
}

// pathWriter writes to a file and reports its errors as errors of path,
// the file the user named, rather than of the temporary file.
type pathWriter struct {
	f    *os.File
	path string
}

func (w pathWriter) Write(p []byte) (int, error) {
	n, err := w.f.Write(p)
	var pe *fs.PathError
	if errors.As(err, &pe) {
		err = &fs.PathError{Op: pe.Op, Path: w.path, Err: pe.Err}
	}
	return n, err
}

// unwrapPath drops the path of a *fs.PathError or *os.LinkError, which may
// be the temporary file's, leaving the cause; the caller names the path.
func unwrapPath(err error) error {
	var pe *fs.PathError
	if errors.As(err, &pe) {
		return pe.Err
	}
	var le *os.LinkError
	if errors.As(err, &le) {
		return le.Err
	}
	return err
}

func tempPrefix(base string) string { return "." + base + ".tmp-" }

// temps holds the temporary files being written. Creating and
// registering a file, and renaming or removing and unregistering it, each
// happen under its lock, so RemoveTemps sees every temporary file that
// exists and none that has become the output.
var temps = struct {
	sync.Mutex
	names map[string]bool
}{names: map[string]bool{}}

// createTemp creates and registers a new temporary file for dir/base with
// the given permissions, reduced by the umask.
func createTemp(dir, base string, perm fs.FileMode) (*os.File, error) {
	temps.Lock()
	defer temps.Unlock()
	prefix := tempPrefix(base) + strconv.Itoa(os.Getpid()) + "-"
	for range 100 {
		var random [6]byte
		if _, err := rand.Read(random[:]); err != nil {
			return nil, err
		}
		name := filepath.Join(dir, prefix+hex.EncodeToString(random[:]))
		f, err := os.OpenFile(name, os.O_RDWR|os.O_CREATE|os.O_EXCL, perm)
		if errors.Is(err, fs.ErrExist) {
			continue
		}
		if err != nil {
			return nil, err
		}
		temps.names[name] = true
		return f, nil
	}
	return nil, errors.New("cannot find a free temporary file name")
}

// renameTemp renames a registered temporary file over target.
func renameTemp(name, target string) error {
	temps.Lock()
	defer temps.Unlock()
	if err := os.Rename(name, target); err != nil {
		return err
	}
	delete(temps.names, name)
	return nil
}

// removeTemp removes a registered temporary file.
func removeTemp(name string) {
	temps.Lock()
	defer temps.Unlock()
	os.Remove(name)
	delete(temps.names, name)
}

// RemoveOnSignal registers a scratch file of the run, such as the pattern
// store of a fit on data larger than memory, for RemoveTemps to remove
// when a signal ends the run. forget unregisters it, for a file removed
// or to be kept.
func RemoveOnSignal(name string) (forget func()) {
	temps.Lock()
	defer temps.Unlock()
	if temps.names == nil {
		temps.names = map[string]bool{}
	}
	temps.names[name] = true
	return func() {
		temps.Lock()
		defer temps.Unlock()
		delete(temps.names, name)
	}
}

// RemoveTemps removes every temporary file that WriteFile is writing, and
// keeps further ones from being created or renamed until release is
// called: a caller about to exit (on a signal, say) calls it and never
// releases, so no WriteFile of another goroutine can leave a file or
// complete an output afterwards.
func RemoveTemps() (release func()) {
	temps.Lock()
	for name := range temps.names {
		os.Remove(name)
		delete(temps.names, name)
	}
	return temps.Unlock
}

// Exit statuses after CleanUpOnSignal's handler ran: 128 plus the
// signal's number, as a shell reports a process a signal ended.
const (
	ExitInterrupted = 130 // SIGINT
	ExitTerminated  = 143 // SIGTERM
)

// CleanUpOnSignal makes SIGINT and SIGTERM remove the temporary files
// WriteFile is writing and end the process with ExitInterrupted or
// ExitTerminated; without it a signal would leave them for the next write
// to clean up. The command's main calls it once, before any work. stop
// restores the default handling.
func CleanUpOnSignal() (stop func()) {
	signals := make(chan os.Signal, 1)
	signal.Notify(signals, os.Interrupt, syscall.SIGTERM)
	done := make(chan struct{})
	go func() {
		select {
		case sig := <-signals:
			RemoveTemps() // never released: the process ends here
			if sig == syscall.SIGTERM {
				os.Exit(ExitTerminated)
			}
			os.Exit(ExitInterrupted)
		case <-done:
		}
	}()
	var once sync.Once
	return func() {
		once.Do(func() {
			signal.Stop(signals)
			close(done)
		})
	}
}

// removeStale removes the temporary files that writers of dir/base which
// have since died left behind. It is best effort: a file it cannot remove
// stays for the next write.
func removeStale(dir, base string) {
	entries, err := os.ReadDir(dir)
	if err != nil {
		return
	}
	prefix := tempPrefix(base)
	for _, e := range entries {
		rest, ok := strings.CutPrefix(e.Name(), prefix)
		if !ok || !e.Type().IsRegular() {
			continue
		}
		pidText, _, ok := strings.Cut(rest, "-")
		pid, err := strconv.Atoi(pidText)
		if !ok || err != nil || pid <= 0 || pid == os.Getpid() || !processGone(pid) {
			continue
		}
		os.Remove(filepath.Join(dir, e.Name()))
	}
}
