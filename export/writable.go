package export

import (
	"errors"
	"fmt"
	"io/fs"
	"os"
	"path/filepath"
)

// CheckWritable checks, before any work is done, that WriteFile can write
// path: it is not a directory, and its directory exists and takes a new
// file. It creates and removes the kind of temporary file WriteFile would
// write (registered, so a signal removes it too). A path written through
// (a device, socket or descriptor path) is checked for writing by opening
// it, which does not change it; a FIFO by its permissions only, as its
// reader would take the closing of a check for the end of the output.
// Errors name path as given.
func CheckWritable(path string) error {
	target, info, through, err := outputTarget(path)
	if err != nil {
		return fmt.Errorf("export: cannot write %s: %w", path, unwrapPath(err))
	}
	if info != nil && info.IsDir() {
		return fmt.Errorf("export: cannot write %s: it is a directory; give a file name", path)
	}
	if through && info != nil && info.Mode()&fs.ModeNamedPipe != 0 {
		// Opening a FIFO and closing it would hand its reader an end of
		// file before the output is written.
		if err := checkAccessWrite(target); err != nil {
			return fmt.Errorf("export: cannot write %s: %w", path, unwrapPath(err))
		}
		return nil
	}
	if through {
		f, err := os.OpenFile(path, os.O_WRONLY|os.O_APPEND, 0)
		if err != nil {
			return fmt.Errorf("export: cannot write %s: %w", path, unwrapPath(err))
		}
		return f.Close()
	}
	dir, base := filepath.Split(target)
	if dir == "" {
		dir = "."
	}
	st, err := os.Stat(dir)
	switch {
	case errors.Is(err, fs.ErrNotExist):
		return fmt.Errorf("export: cannot write %s: the directory %s does not exist", path, filepath.Clean(dir))
	case err != nil:
		return fmt.Errorf("export: cannot write %s: %w", path, unwrapPath(err))
	case !st.IsDir():
		return fmt.Errorf("export: cannot write %s: %s is not a directory", path, filepath.Clean(dir))
	}
	tmp, err := createTemp(dir, base, 0o600)
	if err != nil {
		return fmt.Errorf("export: cannot write %s: %w", path, unwrapPath(err))
	}
	tmp.Close()
	removeTemp(tmp.Name())
	return nil
}
