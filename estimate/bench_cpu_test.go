//go:build !js

package estimate

import "syscall"

// cpuSeconds is the user + system CPU time of this process, a measure of
// work that other jobs on the machine do not inflate (wall time does).
func cpuSeconds() float64 {
	var ru syscall.Rusage
	if syscall.Getrusage(syscall.RUSAGE_SELF, &ru) != nil {
		return 0
	}
	return float64(ru.Utime.Sec+ru.Stime.Sec) + 1e-6*float64(ru.Utime.Usec+ru.Stime.Usec)
}
