//go:build !unix

package train

// freeBytes cannot read the free space here.
func freeBytes(string) (int64, bool) { return 0, false }

// isNoSpace cannot tell a full file system here.
func isNoSpace(error) bool { return false }
