//go:build unix

package export

import (
	"errors"
	"syscall"
)

// processGone reports whether no process has the given id. Signal 0 checks
// for the process without sending anything; a process of another user
// answers EPERM and so counts as alive.
func processGone(pid int) bool {
	return errors.Is(syscall.Kill(pid, 0), syscall.ESRCH)
}
