//go:build unix

package harness

import (
	"errors"
	"syscall"
	"testing"
)

// checkGone fails if any of the processes still exists (an orphan, or a
// zombie nobody waited for). Signal 0 only asks: ESRCH says there is no
// such process, and EPERM that the pid now belongs to another user's
// process, so it was reused after the program, which ran as us, ended.
func checkGone(t *testing.T, pids []int) {
	t.Helper()
	for _, pid := range pids {
		err := syscall.Kill(pid, 0)
		if !errors.Is(err, syscall.ESRCH) && !errors.Is(err, syscall.EPERM) {
			t.Errorf("program %d still exists after the run (%v)", pid, err)
		}
	}
}
