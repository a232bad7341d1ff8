package bench

import "time"

// cpuSample is the CPU time used so far by this process (the load generator,
// veneer and the SQL handler all run in it) and by the whole machine; ok is
// false where it cannot be read.
type cpuSample struct {
	process, machine time.Duration
	ok               bool
}

// cpuUse is the CPU time spent over some answers: in this process, and in
// the rest of the machine (the database server, and anything else running).
type cpuUse struct {
	process, rest time.Duration
	ok            bool
}

// add adds the use between two samples.
func (u *cpuUse) add(before, after cpuSample) {
	if !before.ok || !after.ok {
		return
	}
	p := after.process - before.process
	u.process += p
	u.rest += max(0, after.machine-before.machine-p)
	u.ok = true
}

// perAnswer divides the use by the number of answers.
func (u cpuUse) perAnswer(n int64) (process, rest Micros) {
	if !u.ok || n == 0 {
		return 0, 0
	}
	return Micros(u.process / time.Duration(n)), Micros(u.rest / time.Duration(n))
}
