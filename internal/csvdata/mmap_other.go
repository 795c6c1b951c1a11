//go:build !unix

package csvdata

import "os"

// mapFile returns nil: on this system files are read, not mapped.
func mapFile(*os.File) (string, func() error) { return "", nil }
