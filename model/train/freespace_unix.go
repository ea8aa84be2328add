//go:build unix

package train

import (
	"errors"

	"golang.org/x/sys/unix"
)

// freeBytes returns the space available to this user in dir's file system.
func freeBytes(dir string) (int64, bool) {
	var st unix.Statfs_t
	if err := unix.Statfs(dir, &st); err != nil {
		return 0, false
	}
	return int64(st.Bavail) * int64(st.Bsize), true
}

// isNoSpace reports whether err is a full file system or an exhausted quota.
func isNoSpace(err error) bool {
	return errors.Is(err, unix.ENOSPC) || errors.Is(err, unix.EDQUOT)
}
