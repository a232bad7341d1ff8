package faults

import (
	"context"
	"strings"
	"testing"
	"time"
)

// database is a throw-away server the fault tests break.
type database interface {
	DSN() string
	// Stop makes the server go away and Start brings it back.
	Stop()
	Start()
	// KillVeneer ends veneer's sessions from the server's side.
	KillVeneer() int
	// VeneerSessions counts veneer's sessions on the server.
	VeneerSessions() int
	// Lock holds a lock that veneer's queries of the turbine table wait on,
	// until release.
	Lock(t *testing.T) (release func())
	// LockWaiters counts veneer's sessions waiting for that lock.
	LockWaiters() int
}

// pgDatabase is a PostgreSQL cluster as a database: it stops with -m fast,
// as an operator's restart does.
type pgDatabase struct{ *pgServer }

func (d pgDatabase) Stop() { d.pgServer.Stop("fast") }

func (d pgDatabase) Lock(t *testing.T) func() {
	conn := d.Admin()
	ctx := context.Background()
	tx, err := conn.Begin(ctx)
	if err == nil {
		_, err = tx.Exec(ctx, "LOCK TABLE turbine IN ACCESS EXCLUSIVE MODE")
	}
	if err != nil {
		t.Fatal(err)
	}
	return func() {
		tx.Rollback(ctx)
		conn.Close(ctx)
	}
}

func (d pgDatabase) LockWaiters() int {
	conn := d.Admin()
	defer conn.Close(context.Background())
	var n int
	if err := conn.QueryRow(context.Background(),
		"SELECT count(*) FROM pg_stat_activity WHERE usename = $1 AND wait_event_type = $2", veneerRole, "Lock").Scan(&n); err != nil {
		d.t.Fatal(err)
	}
	return n
}

// mariaDatabase is a MariaDB server as a database.
type mariaDB struct{ *mariaServer }

func (d mariaDB) Lock(t *testing.T) func() {
	db := d.Admin(mariaDatabase)
	conn, err := db.Conn(context.Background())
	if err == nil {
		_, err = conn.ExecContext(context.Background(), "LOCK TABLES turbine WRITE")
	}
	if err != nil {
		t.Fatal(err)
	}
	return func() {
		conn.ExecContext(context.Background(), "UNLOCK TABLES")
		conn.Close()
		db.Close()
	}
}

func (d mariaDB) LockWaiters() int {
	db := d.Admin("")
	defer db.Close()
	var n int
	if err := db.QueryRow("SELECT COUNT(*) FROM information_schema.PROCESSLIST WHERE USER = ? AND STATE LIKE ?",
		veneerRole, "%lock%").Scan(&n); err != nil {
		d.t.Fatal(err)
	}
	return n
}

func TestPostgresFaults(t *testing.T) {
	s := newPGPrimary(t)
	runFaults(t, pgDatabase{s})
}

func TestMariaDBFaults(t *testing.T) {
	s := newMaria(t)
	runFaults(t, mariaDB{s})
}

// runFaults serves db with one veneer process and breaks db in each of the
// ways below, one after the other, checking after each that the process is
// back to its baseline.
func runFaults(t *testing.T, db database) {
	v := startVeneer(t, db.DSN())
	want := warm(t, v)
	// The baseline, after a short load has filled the pool.
	sortReplies(startLoadFor(v, time.Second), want)
	time.Sleep(200 * time.Millisecond)
	base := v.baseline()
	t.Logf("baseline: %v goroutines, %v connections open", base.goroutines, base.conns)
	steps := []struct {
		name string
		f    func(t *testing.T, v *veneer, db database, want int)
	}{
		{"restart", restart},
		{"kill sessions", killSessions},
		{"lock wait", lockWait},
		{"mid-stream", midStream},
	}
	for _, s := range steps {
		if !t.Run(s.name, func(t *testing.T) { s.f(t, v, db, want) }) {
			continue
		}
		now := v.checkBaseline(t, base, maxConns)
		t.Logf("after %s: %v goroutines, %v connections open; %d sessions on the server",
			s.name, now.goroutines, now.conns, db.VeneerSessions())
		if n := db.VeneerSessions(); n > maxConns {
			t.Errorf("after %s: %d veneer sessions on the server, more than the pool's %d", s.name, n, maxConns)
		}
	}
	v.checkSecrets(t)
}

// startLoadFor runs the load for d and returns its replies.
func startLoadFor(v *veneer, d time.Duration) []reply {
	l := startLoad(v, siteQuery)
	time.Sleep(d)
	return l.Stop()
}

// restart stops the database under load, checks that clients get clean
// 503s and /readyz turns unready, starts it again and measures the time
// until veneer answers and is ready again.
func restart(t *testing.T, v *veneer, db database, want int) {
	l := startLoad(v, siteQuery)
	time.Sleep(500 * time.Millisecond)
	down := time.Now() // the shutdown begins
	db.Stop()
	if d, ok := waitFor(10*time.Second, func() bool { return v.ready() == 503 }); !ok {
		t.Errorf("/readyz still ready 10s after the database stopped")
	} else {
		t.Logf("/readyz unready %v after the database stopped", d.Round(time.Millisecond))
	}
	time.Sleep(time.Until(down.Add(outage())))
	db.Start()
	back := time.Now()
	recovery, ok := waitFor(15*time.Second, func() bool {
		return v.ready() == 200 && sortReplies([]reply{v.query(siteQuery)}, want).ok != nil
	})
	if !ok {
		t.Errorf("veneer has not recovered 15s after the database came back")
	} else if recovery > 5*time.Second {
		t.Errorf("recovery took %v, more than 5s", recovery)
	}
	t.Logf("recovery: veneer answered and was ready %v after the database came back", recovery.Round(time.Millisecond))
	time.Sleep(time.Second)
	rs := l.Stop()
	o := v.sorted(t, rs, want, "")
	if len(o.refused) == 0 {
		t.Error("no client was refused while the database was down")
	}
	for _, r := range o.refused {
		// In flight when the shutdown began, or sent before service was back.
		if r.end.Before(down) || r.start.After(back.Add(recovery)) {
			t.Errorf("a 503 outside the outage (sent %v after the shutdown began, %v after the database was back): %v",
				r.start.Sub(down).Round(time.Millisecond), r.start.Sub(back).Round(time.Millisecond), r)
		}
		if !strings.Contains(string(r.body), "database is unavailable") {
			t.Errorf("503 without the reason: %v", r)
		}
	}
	checkNoHang(t, rs)
}

// killSessions ends veneer's sessions from the database's side, three times
// under load: only queries in flight while the sessions were killed may
// fail, and cleanly; a session killed while idle in the pool costs none.
func killSessions(t *testing.T, v *veneer, db database, want int) {
	l := startLoad(v, siteQuery)
	killed := 0
	type window struct{ from, to time.Time }
	var kills []window
	for range 3 {
		time.Sleep(300 * time.Millisecond)
		from := time.Now()
		killed += db.KillVeneer()
		kills = append(kills, window{from, time.Now()})
	}
	time.Sleep(time.Second)
	rs := l.Stop()
	o := sortReplies(rs, want)
	t.Logf("killed %d sessions; %d replies: %d answers, %d clean 503s, %d faults", killed, len(rs), len(o.ok), len(o.refused), len(o.bad))
	if killed == 0 {
		t.Fatal("no veneer session to kill")
	}
	v.reportFaults(t, o)
	inFlight := 0
	for _, r := range o.refused {
		during := false
		for _, k := range kills {
			during = during || r.start.Before(k.to) && r.end.After(k.from)
		}
		if during {
			inFlight++
		} else {
			t.Errorf("a query that began after the kills failed: %v", r)
		}
	}
	t.Logf("%d of the refused queries were in flight during a kill", inFlight)
	if v.ready() != 200 {
		t.Error("not ready after the kills")
	}
	checkNoHang(t, rs)
}

// lockWait holds a lock the load's query waits on for longer than the query
// timeout: the queries end at their timeout with a clean 503, the database
// stops running them, and service is normal once the lock is released.
func lockWait(t *testing.T, v *veneer, db database, want int) {
	release := db.Lock(t)
	l := startLoad(v, siteQuery)
	time.Sleep(outage() + queryTimeout)
	if v.ready() != 200 {
		t.Error("a slow database made veneer unready; it still answers")
	}
	rs := l.Stop()
	// With no query left waiting in veneer, none may be left waiting in the
	// database: a timeout cancels the statement there too.
	if d, ok := waitFor(2*queryTimeout, func() bool { return db.LockWaiters() == 0 }); !ok {
		t.Errorf("%d veneer sessions still wait for the lock %v after the load stopped", db.LockWaiters(), d)
	}
	release()
	o := v.sorted(t, rs, want, " while locked")
	if len(o.refused) == 0 {
		t.Error("no query timed out while the table was locked")
	}
	for _, r := range o.refused {
		if !strings.Contains(string(r.body), "time limit") {
			t.Errorf("503 that does not say it is the time limit: %v", r)
		}
	}
	checkNoHang(t, rs)
	if o := sortReplies(startLoadFor(v, 500*time.Millisecond), want); len(o.bad)+len(o.refused) > 0 || len(o.ok) == 0 {
		t.Errorf("after the lock was released: %d answers, %d refusals, %d faults", len(o.ok), len(o.refused), len(o.bad))
	}
}

// hangSlack is what a request may take past the query timeout before it
// counts as hung: the HTTP exchange and the statement's cancellation on a
// busy machine (a generous bound of ours).
const hangSlack = 3 * time.Second

func checkNoHang(t *testing.T, rs []reply) {
	t.Helper()
	for _, r := range rs {
		if d := r.end.Sub(r.start); d > queryTimeout+hangSlack {
			t.Errorf("a request took %v, past the %v timeout: %v", d.Round(time.Millisecond), queryTimeout, r)
		}
	}
}
