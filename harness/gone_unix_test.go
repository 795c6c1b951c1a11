//go:build unix

package harness

import (
	"errors"
	"syscall"
	"testing"
)

// checkGone fails if any of the processes still exists (an orphan, or a
// zombie nobody waited for).
func checkGone(t *testing.T, pids []int) {
	t.Helper()
	for _, pid := range pids {
		if err := syscall.Kill(pid, 0); !errors.Is(err, syscall.ESRCH) {
			t.Errorf("program %d still exists after the run (%v)", pid, err)
		}
	}
}
