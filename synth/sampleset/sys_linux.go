package sampleset

import (
	"bytes"
	"errors"
	"fmt"
	"os"
	"strconv"
	"strings"
	"time"

	"golang.org/x/sys/unix"
)

// exchange swaps a and b with renameat2(RENAME_EXCHANGE), so there is no
// moment at which neither holds a set. File systems without it (and
// kernels before 3.15) answer EINVAL or ENOSYS.
func exchange(a, b string) error {
	err := unix.Renameat2(unix.AT_FDCWD, a, unix.AT_FDCWD, b, unix.RENAME_EXCHANGE)
	if errors.Is(err, unix.EINVAL) || errors.Is(err, unix.ENOSYS) || errors.Is(err, unix.EOPNOTSUPP) {
		return errNoExchange
	}
	if err != nil {
		return &os.LinkError{Op: "exchange", Old: a, New: b, Err: err}
	}
	return nil
}

// userHZ is the unit of the start times in /proc/PID/stat: clock ticks of
// 1/100 s on every architecture Go runs Linux on (proc(5), "USER_HZ").
const userHZ = 100

// processStart returns when process pid started, from its start time in
// /proc/PID/stat after the boot time in /proc/stat; ok is false when the
// process does not exist or has ended and waits to be reaped (a zombie).
func processStart(pid int) (started time.Time, ok bool) {
	stat, err := os.ReadFile(fmt.Sprintf("/proc/%d/stat", pid))
	if err != nil {
		return time.Time{}, false
	}
	// The command name, field 2, is in parentheses and may hold spaces
	// and parentheses itself; the fields after the last ')' are plain.
	end := bytes.LastIndexByte(stat, ')')
	if end < 0 {
		return time.Time{}, false
	}
	fields := strings.Fields(string(stat[end+1:]))
	// fields[0] is field 3, the state; field 22 is the start time.
	if len(fields) < 20 || fields[0] == "Z" || fields[0] == "X" {
		return time.Time{}, false
	}
	ticks, err := strconv.ParseInt(fields[19], 10, 64)
	boot, berr := bootTime()
	if err != nil || berr != nil {
		return time.Time{}, false
	}
	return boot.Add(time.Duration(ticks) * time.Second / userHZ), true
}

// bootTime reads the boot time, in whole seconds, from /proc/stat.
func bootTime() (time.Time, error) {
	stat, err := os.ReadFile("/proc/stat")
	if err != nil {
		return time.Time{}, err
	}
	for line := range strings.SplitSeq(string(stat), "\n") {
		if v, ok := strings.CutPrefix(line, "btime "); ok {
			s, err := strconv.ParseInt(strings.TrimSpace(v), 10, 64)
			return time.Unix(s, 0), err
		}
	}
	return time.Time{}, errors.New("/proc/stat has no btime line")
}
