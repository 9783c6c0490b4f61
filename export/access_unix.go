//go:build unix

package export

import "syscall"

// checkAccessWrite checks that this process may write path, without
// opening it.
func checkAccessWrite(path string) error {
	const wOK = 2 // access(2)'s W_OK
	return syscall.Access(path, wOK)
}
