package faults

import (
	"context"
	"strings"
	"testing"
	"time"
)

// The series of the replica test's members on /metrics.
const (
	replicaUp         = `veneer_db_member_up{member="replica-1",source="default"}`
	primaryUp         = `veneer_db_member_up{member="primary",source="default"}`
	replicaStatements = `veneer_db_member_statements_total{member="replica-1",source="default"}`
	primaryStatements = `veneer_db_member_statements_total{member="primary",source="default"}`
)

// TestReplicaStoppedUnderLoad serves a PostgreSQL primary and its streaming
// replica as one source, stops the replica (as a crash: pg_ctl stop -m
// immediate) under a steady load, and checks that only the queries in
// flight on it fail, that it is taken out while the primary serves alone,
// that /readyz stays ready, and that it is put back once it runs again.
func TestReplicaStoppedUnderLoad(t *testing.T) {
	primary := newPGPrimary(t)
	replica := newPGReplica(t, primary)
	checkStreaming(t, primary, replica)

	v := startVeneerEnv(t, []string{"VENEER_DB=" + primary.DSN(), "VENEER_REPLICAS=" + replica.DSN()},
		"--member-retry-first", "200ms", "--member-retry-max", "1s")
	want := warm(t, v)
	sortReplies(startLoadFor(v, time.Second), want)
	m := v.metrics()
	if m[primaryUp] != 1 || m[replicaUp] != 1 || m[primaryStatements] == 0 || m[replicaStatements] == 0 {
		t.Fatalf("before the stop: up %v and %v, statements %v and %v; want both members up and used",
			m[primaryUp], m[replicaUp], m[primaryStatements], m[replicaStatements])
	}
	base := v.baseline()

	l := startLoad(v, siteQuery)
	time.Sleep(500 * time.Millisecond)
	stopFrom := time.Now()
	replica.Stop("immediate")
	stopTo := time.Now()
	if d, ok := waitFor(10*time.Second, func() bool { return v.metrics()[replicaUp] == 0 }); !ok {
		t.Error("the stopped replica was not taken out within 10s")
	} else {
		t.Logf("replica taken out %v after it stopped", d.Round(time.Millisecond))
	}
	unready := 0
	for end := time.Now().Add(outage()); time.Now().Before(end); time.Sleep(100 * time.Millisecond) {
		if v.ready() != 200 {
			unready++
		}
	}
	if unready > 0 {
		t.Errorf("/readyz was unready %d times while the primary served", unready)
	}
	during := v.metrics()[replicaStatements]
	replica.Start()
	started := time.Now()
	if d, ok := waitFor(10*time.Second, func() bool { return v.metrics()[replicaUp] == 1 }); !ok {
		t.Error("the replica was not put back within 10s of its start")
	} else {
		t.Logf("replica put back %v after it started", d.Round(time.Millisecond))
	}
	time.Sleep(time.Second)
	rs := l.Stop()

	m = v.metrics()
	if m[replicaStatements] <= during {
		t.Errorf("no statement reached the replica after it came back (%v before, %v after)", during, m[replicaStatements])
	}
	o := v.sorted(t, rs, want, "")
	for _, r := range o.refused {
		if !(r.start.Before(stopTo) && r.end.After(stopFrom)) {
			t.Errorf("a query that was not in flight when the replica stopped failed: %v", r)
		}
	}
	if len(o.refused) > loadWorkers {
		t.Errorf("%d queries failed; at most the %d in flight may", len(o.refused), loadWorkers)
	}
	checkNoHang(t, rs)
	logs := v.Logs()
	if !strings.Contains(logs, `"msg":"database taken out of service; it is tried again later","member":"replica-1"`) ||
		!strings.Contains(logs, `"msg":"database back in service","member":"replica-1"`) {
		t.Errorf("the log does not show replica-1 going out and back:\n%s", logs)
	}
	now := v.checkBaseline(t, base, 2*maxConns)
	t.Logf("baseline %+v, after %+v; replica started %v ago", base, now, time.Since(started).Round(time.Millisecond))
	v.checkSecrets(t)
}

// checkStreaming checks that replica is a standby that streams from primary.
func checkStreaming(t *testing.T, primary, replica *pgServer) {
	t.Helper()
	ctx := context.Background()
	rc := replica.Admin()
	defer rc.Close(ctx)
	var standby bool
	if err := rc.QueryRow(ctx, "SELECT pg_is_in_recovery()").Scan(&standby); err != nil || !standby {
		t.Fatalf("the replica is not a standby: %v %v", standby, err)
	}
	pc := primary.Admin()
	defer pc.Close(ctx)
	if _, ok := waitFor(20*time.Second, func() bool {
		var n int
		pc.QueryRow(ctx, "SELECT count(*) FROM pg_stat_replication WHERE state = $1", "streaming").Scan(&n)
		return n == 1
	}); !ok {
		t.Fatal("the primary has no streaming replica after 20s")
	}
}
