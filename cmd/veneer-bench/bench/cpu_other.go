//go:build !linux

package bench

import "time"

// sampleCPU is only implemented on Linux; elsewhere the throughput report
// leaves the CPU columns empty.
func sampleCPU() cpuSample { return cpuSample{} }

// ProcessCPU is only implemented on Linux; elsewhere it is 0.
func ProcessCPU() time.Duration { return 0 }
