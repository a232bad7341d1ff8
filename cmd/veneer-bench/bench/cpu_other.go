//go:build !linux

package bench

// sampleCPU is only implemented on Linux; elsewhere the throughput report
// leaves the CPU columns empty.
func sampleCPU() cpuSample { return cpuSample{} }
