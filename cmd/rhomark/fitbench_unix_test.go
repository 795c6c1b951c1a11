//go:build unix

package main

import (
	"os"
	"syscall"
)

// pageFaults returns the page faults (minor and major) of a finished
// process, or 0 where they are not reported.
func pageFaults(ps *os.ProcessState) float64 {
	ru, ok := ps.SysUsage().(*syscall.Rusage)
	if !ok {
		return 0
	}
	return float64(ru.Minflt + ru.Majflt)
}
