package export

import (
	"bufio"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"strconv"
	"strings"
)

// WriteFile writes a file atomically: write fills a temporary file in the
// same directory, which is synced and renamed over path only if write and
// every later step succeed. On any failure the temporary file is removed and
// path is untouched.
//
// The temporary file is named .BASE.tmp-PID-RANDOM. A writer killed before
// it could clean up (SIGKILL, power loss) leaves its temporary file behind;
// the next successful WriteFile of the same path removes every such file
// whose process no longer runs, and never one of a live writer.
func WriteFile(path string, write func(io.Writer) error) (err error) {
	if info, err := os.Stat(path); err == nil && info.IsDir() {
		return fmt.Errorf("export: cannot write %s: it is a directory; give a file name", path)
	}
	dir, base := filepath.Split(path)
	if dir == "" {
		dir = "."
	}
	tmp, err := os.CreateTemp(dir, tempPrefix(base)+strconv.Itoa(os.Getpid())+"-*")
	if err != nil {
		return fmt.Errorf("export: cannot write %s: %w", path, err)
	}
	defer func() {
		if err != nil {
			tmp.Close()
			os.Remove(tmp.Name())
		}
	}()
	bw := bufio.NewWriterSize(tmp, 64<<10)
	if err = write(bw); err != nil {
		return err
	}
	if err = bw.Flush(); err != nil {
		return fmt.Errorf("export: cannot write %s: %w", path, err)
	}
	if err = tmp.Chmod(0o644); err != nil {
		return fmt.Errorf("export: cannot write %s: %w", path, err)
	}
	if err = tmp.Sync(); err != nil {
		return fmt.Errorf("export: cannot write %s: %w", path, err)
	}
	if err = tmp.Close(); err != nil {
		return fmt.Errorf("export: cannot write %s: %w", path, err)
	}
	if err = os.Rename(tmp.Name(), path); err != nil {
		return fmt.Errorf("export: cannot write %s: %w", path, err)
	}
	removeStale(dir, base)
	return nil
}

func tempPrefix(base string) string { return "." + base + ".tmp-" }

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
