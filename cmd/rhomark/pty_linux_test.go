//go:build linux

package main

import (
	"fmt"
	"os"
	"os/exec"
	"syscall"
	"unsafe"
)

// startInTerminal starts cmd on a new pseudo-terminal of 50 rows and 200
// columns, its controlling terminal and standard streams, and returns the
// terminal's master side: what is written to it is typed, what is read
// from it is displayed.
func startInTerminal(cmd *exec.Cmd) (*os.File, error) {
	master, err := os.OpenFile("/dev/ptmx", os.O_RDWR|syscall.O_NOCTTY, 0)
	if err != nil {
		return nil, fmt.Errorf("opening a pseudo-terminal: %w", err)
	}
	ioctl := func(req uintptr, arg unsafe.Pointer) error {
		if _, _, e := syscall.Syscall(syscall.SYS_IOCTL, master.Fd(), req, uintptr(arg)); e != 0 {
			return e
		}
		return nil
	}
	var n uint32
	var unlock int32
	size := struct{ rows, cols, x, y uint16 }{50, 200, 0, 0}
	if err := ioctl(syscall.TIOCGPTN, unsafe.Pointer(&n)); err != nil {
		master.Close()
		return nil, fmt.Errorf("pseudo-terminal number: %w", err)
	}
	if err := ioctl(syscall.TIOCSPTLCK, unsafe.Pointer(&unlock)); err != nil {
		master.Close()
		return nil, fmt.Errorf("unlocking the pseudo-terminal: %w", err)
	}
	if err := ioctl(syscall.TIOCSWINSZ, unsafe.Pointer(&size)); err != nil {
		master.Close()
		return nil, fmt.Errorf("sizing the pseudo-terminal: %w", err)
	}
	tty, err := os.OpenFile(fmt.Sprintf("/dev/pts/%d", n), os.O_RDWR|syscall.O_NOCTTY, 0)
	if err != nil {
		master.Close()
		return nil, err
	}
	defer tty.Close() // the child has its own copies
	cmd.Stdin, cmd.Stdout, cmd.Stderr = tty, tty, tty
	cmd.SysProcAttr = &syscall.SysProcAttr{Setsid: true, Setctty: true, Ctty: 0}
	if err := cmd.Start(); err != nil {
		master.Close()
		return nil, err
	}
	return master, nil
}
