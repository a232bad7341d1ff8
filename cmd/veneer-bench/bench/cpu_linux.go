package bench

import (
	"os"
	"strconv"
	"strings"
	"syscall"
	"time"
)

// userHZ is the unit of the times in /proc/stat: Linux reports them in
// hundredths of a second on every architecture it exports them for (the
// kernel's USER_HZ; from memory of proc(5), common practice).
const userHZ = 100

// sampleCPU reads the CPU time this process and the whole machine have used.
func sampleCPU() cpuSample {
	process := ProcessCPU()
	if process == 0 {
		return cpuSample{}
	}
	machine, ok := machineBusy()
	return cpuSample{process: process, machine: machine, ok: ok}
}

// ProcessCPU is the user and system CPU time this process has used; 0 when
// it cannot be read.
func ProcessCPU() time.Duration {
	var ru syscall.Rusage
	if err := syscall.Getrusage(syscall.RUSAGE_SELF, &ru); err != nil {
		return 0
	}
	return time.Duration(ru.Utime.Nano() + ru.Stime.Nano())
}

// machineBusy sums the busy columns of /proc/stat's "cpu" line: user, nice,
// system, irq, softirq and steal; idle and iowait are not busy.
func machineBusy() (time.Duration, bool) {
	b, err := os.ReadFile("/proc/stat")
	if err != nil {
		return 0, false
	}
	line, _, _ := strings.Cut(string(b), "\n")
	f := strings.Fields(line)
	if len(f) < 9 || f[0] != "cpu" {
		return 0, false
	}
	var ticks int64
	for _, i := range []int{1, 2, 3, 6, 7, 8} {
		n, err := strconv.ParseInt(f[i], 10, 64)
		if err != nil {
			return 0, false
		}
		ticks += n
	}
	return time.Duration(ticks) * time.Second / userHZ, true
}
