package bench

import (
	"context"
	"slices"
	"sync"
	"sync/atomic"
	"time"

	"veneer/cmd/veneer-bench/mix"
)

// MaxThroughputTime bounds one throughput measurement of one side.
const MaxThroughputTime = 30 * time.Second

// Throughput is the concurrency measurement of one query.
type Throughput struct {
	Query   string  `json:"query"`
	Clients int     `json:"clients"`
	Seconds float64 `json:"seconds_per_side"`
	// VeneerQPS and SQLQPS are answers completed per second; Ratio is
	// VeneerQPS / SQLQPS.
	VeneerQPS float64 `json:"veneer_qps"`
	SQLQPS    float64 `json:"sql_qps"`
	Ratio     float64 `json:"ratio"`
	// The latency percentiles of the answers under that load.
	VeneerP50 Micros `json:"veneer_p50_us"`
	VeneerP99 Micros `json:"veneer_p99_us"`
	SQLP50    Micros `json:"sql_p50_us"`
	SQLP99    Micros `json:"sql_p99_us"`
	// Errors count failed requests; they are not counted as answers.
	VeneerErrors int64 `json:"veneer_errors"`
	SQLErrors    int64 `json:"sql_errors"`
	// VeneerError and SQLError are the first failure of each side, if any.
	VeneerError string `json:"veneer_error,omitempty"`
	SQLError    string `json:"sql_error,omitempty"`
	// The CPU time per answer spent in this process (load generator and
	// server) and in the rest of the machine (the database server and
	// anything else running); zero where it cannot be read.
	VeneerCPU     Micros `json:"veneer_process_cpu_us,omitempty"`
	VeneerRestCPU Micros `json:"veneer_rest_cpu_us,omitempty"`
	SQLCPU        Micros `json:"sql_process_cpu_us,omitempty"`
	SQLRestCPU    Micros `json:"sql_rest_cpu_us,omitempty"`
}

// load is what one side achieved under load.
type load struct {
	done, failed int64
	firstErr     string
	elapsed      time.Duration
	cpu          cpuUse
	latencies    []time.Duration
}

// throughputRounds is how many times each side's measurement is cut: at the
// default 10 s a side, each step lasts 250 ms, shorter than the swings of a
// shared machine's speed, and long enough for thousands of answers.
const throughputRounds = 20

// throughput runs cfg.Clients clients against each side for ThroughputTime,
// in throughputRounds rounds of veneer, SQL, SQL, veneer, so that a drift of
// the machine's speed over the measurement, which on a shared machine is
// felt within seconds, weighs on both sides alike.
func throughput(ctx context.Context, cfg Config, c *client, q mix.Query) Throughput {
	d := min(cfg.ThroughputTime, MaxThroughputTime)
	veneer, twin := sides(cfg, q)
	var v, s load
	step := d / (2 * throughputRounds)
	for range throughputRounds {
		for _, st := range []struct {
			side side
			into *load
		}{{veneer, &v}, {twin, &s}, {twin, &s}, {veneer, &v}} {
			hammer(ctx, c, st.side, cfg.Clients, step, st.into)
		}
	}
	t := Throughput{
		Query: q.Name, Clients: cfg.Clients, Seconds: d.Seconds(),
		VeneerQPS: float64(v.done) / v.elapsed.Seconds(), SQLQPS: float64(s.done) / s.elapsed.Seconds(),
		VeneerErrors: v.failed, SQLErrors: s.failed, VeneerError: v.firstErr, SQLError: s.firstErr,
	}
	if t.SQLQPS > 0 {
		t.Ratio = t.VeneerQPS / t.SQLQPS
	}
	t.VeneerCPU, t.VeneerRestCPU = v.cpu.perAnswer(v.done)
	t.SQLCPU, t.SQLRestCPU = s.cpu.perAnswer(s.done)
	t.VeneerP50, t.VeneerP99 = percentiles(v.latencies)
	t.SQLP50, t.SQLP99 = percentiles(s.latencies)
	return t
}

// hammer has clients goroutines ask s back to back for d, then waits for the
// answers still on their way, which count. A request is never cut off at the
// end of the step: a cancelled request would leave its work running on the
// server into the next step, as load that no client sent (and an admission
// queue full of it).
func hammer(ctx context.Context, c *client, s side, clients int, d time.Duration, into *load) {
	var done, failed atomic.Int64
	var once sync.Once
	var firstErr string
	lat := make([][]time.Duration, clients)
	var wg sync.WaitGroup
	cpu := sampleCPU()
	start := time.Now()
	end := start.Add(d)
	for i := range clients {
		wg.Go(func() {
			for ctx.Err() == nil && time.Now().Before(end) {
				_, took, err := c.fetch(ctx, s)
				switch {
				case ctx.Err() != nil:
					// The run was cancelled: not an answer.
				case err != nil:
					failed.Add(1)
					once.Do(func() { firstErr = oneLine(err.Error()) })
				default:
					done.Add(1)
					lat[i] = append(lat[i], took)
				}
			}
		})
	}
	wg.Wait()
	into.elapsed += time.Since(start)
	into.cpu.add(cpu, sampleCPU())
	into.done += done.Load()
	into.failed += failed.Load()
	if into.firstErr == "" {
		into.firstErr = firstErr
	}
	for _, l := range lat {
		into.latencies = append(into.latencies, l...)
	}
}

func percentiles(ds []time.Duration) (p50, p99 Micros) {
	if len(ds) == 0 {
		return 0, 0
	}
	s := append([]time.Duration(nil), ds...)
	slices.Sort(s)
	at := func(p float64) Micros { return Micros(s[min(len(s)-1, int(p*float64(len(s))))]) }
	return at(0.50), at(0.99)
}
