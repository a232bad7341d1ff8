package source

import (
	"context"
	"database/sql"
	"errors"
	"fmt"
	"strings"
	"sync"
	"sync/atomic"
	"time"
)

// Member names one database of a Group: the primary or one of its read
// replicas.
type Member struct {
	// Name labels the member in metrics and logs, in place of the DSN, which
	// may hold a password.
	Name string
	// DSN opens the member, as Open takes it.
	DSN string
}

// MemberChange reports that a member was taken out or put back.
type MemberChange struct {
	Name string
	// Up says that the member takes statements again; false that it was
	// taken out.
	Up bool
	// Err is the failure that took the member out, its password hidden.
	Err error
}

// MemberState is what a Group knows of one member now.
type MemberState struct {
	Name string
	// Up says that the member takes statements.
	Up bool
	// Pool is the state of the member's connection pool.
	Pool sql.DBStats
	// Statements counts the statements the member has started.
	Statements int64
	// Removals counts the times the member was taken out.
	Removals int64
}

// Group is a source made of databases that hold the same data, a primary and
// its read replicas, all of one dialect. It spreads statements over the
// members that answer, in turn. A member whose connection fails is taken out
// and probed again in the background, with a growing pause between probes
// (RetryBackoff), until it answers. A statement whose member fails before it
// returns its cursor is started again on the next member, so the only
// statements a failing member costs are those already reading rows from it.
// The Group is ready (Ping) while one member answers.
type Group struct {
	dialect  Dialect
	members  []*member
	turn     atomic.Uint64
	retryMin time.Duration
	retryMax time.Duration
	probeFor time.Duration
	onChange func(MemberChange)
	// wake tells the prober that a member went down; ctx ends at Close.
	wake chan struct{}
	ctx  context.Context
	stop context.CancelFunc
	wg   sync.WaitGroup
}

var _ Source = (*Group)(nil)

// member is one database of a group and its health.
type member struct {
	name   string
	src    Source
	secret string // the DSN's password, kept out of reported errors
	// statements and removals are counted for MemberState.
	statements, removals atomic.Int64

	mu      sync.Mutex
	up      bool
	backoff time.Duration // the pause before the next probe
	due     time.Time     // when the next probe is due, while down
}

// OpenGroup opens a source over the given members (the primary first, by
// convention; every member takes statements). Members that do not answer at
// once start out taken out and are probed like members that fail later;
// OpenGroup fails only when no member answers, when two members share a name,
// or when the members are not of one dialect. The options apply to every
// member, and RetryBackoff and OnMemberChange to the group.
func OpenGroup(ctx context.Context, members []Member, opts ...Option) (*Group, error) {
	if len(members) == 0 {
		return nil, errors.New("open group: no members")
	}
	o := newOptions(opts)
	ms := make([]*member, 0, len(members))
	fail := func(err error) (*Group, error) {
		for _, m := range ms {
			m.src.Close()
		}
		return nil, err
	}
	seen := map[string]bool{}
	for i, mb := range members {
		switch {
		case mb.Name == "":
			return fail(fmt.Errorf("open group: member %d has no name", i+1))
		case seen[mb.Name]:
			return fail(fmt.Errorf("open group: two members are named %q", mb.Name))
		}
		seen[mb.Name] = true
		src, err := open(mb.DSN, o)
		if err != nil {
			return fail(fmt.Errorf("open group: member %s: %w", mb.Name, err))
		}
		ms = append(ms, &member{name: mb.Name, src: src, secret: password(mb.DSN)})
		if d := ms[0].src.Dialect(); src.Dialect() != d {
			return fail(fmt.Errorf("open group: member %s is %s, member %s is %s; a group has one dialect",
				mb.Name, src.Dialect(), ms[0].name, d))
		}
	}
	g := newGroup(ms, o)
	var wg sync.WaitGroup
	errs := make([]error, len(ms))
	for i, m := range ms {
		wg.Go(func() { errs[i] = ping(ctx, m.src, o) })
	}
	wg.Wait()
	var down []string
	for i, m := range ms {
		if errs[i] == nil {
			m.up = true
			continue
		}
		m.backoff, m.due = g.retryMin, time.Now().Add(g.retryMin)
		down = append(down, fmt.Sprintf("%s: %v", m.name, tidy(errs[i], m.secret)))
	}
	if len(down) == len(ms) {
		return fail(fmt.Errorf("open group: no member answers: %s", strings.Join(down, "; ")))
	}
	g.start()
	return g, nil
}

// newGroup makes a group of members whose health is already set; start
// starts its prober.
func newGroup(ms []*member, o options) *Group {
	ctx, stop := context.WithCancel(context.Background())
	return &Group{
		dialect:  ms[0].src.Dialect(),
		members:  ms,
		retryMin: o.retryMin,
		retryMax: o.retryMax,
		probeFor: o.connectTimeout,
		onChange: o.onChange,
		wake:     make(chan struct{}, 1),
		ctx:      ctx,
		stop:     stop,
	}
}

func (g *Group) start() {
	g.wg.Add(1)
	go g.probe()
}

// Dialect implements Source.
func (g *Group) Dialect() Dialect { return g.dialect }

// Query implements Source: it runs the statement on the next member that is
// up, and on the one after if that member's connection fails, and so on; when
// every member that is up has failed, it tries those taken out before it
// gives up.
func (g *Group) Query(ctx context.Context, sql string, args ...any) (Rows, error) {
	var errs []error
	for _, m := range g.order() {
		rows, err := m.src.Query(ctx, sql, args...)
		if err == nil {
			m.statements.Add(1)
			g.recovered(m)
			return &memberRows{Rows: rows, ctx: ctx, g: g, m: m}, nil
		}
		if ctx.Err() != nil || !IsUnavailable(err) {
			return nil, err
		}
		g.failed(m, err)
		errs = append(errs, fmt.Errorf("member %s: %w", m.name, err))
	}
	return nil, errors.Join(errs...)
}

// Ping implements Source: nil when a member answers, tried in the order
// Query uses. A member that does not answer is taken out, and one taken out
// that answers is put back.
func (g *Group) Ping(ctx context.Context) error {
	var errs []error
	for _, m := range g.order() {
		err := m.src.Ping(ctx)
		if err == nil {
			g.recovered(m)
			return nil
		}
		if ctx.Err() != nil {
			return err
		}
		g.failed(m, err)
		errs = append(errs, fmt.Errorf("member %s: %w", m.name, err))
	}
	return errors.Join(errs...)
}

// Close implements Source: it stops the prober and closes every member.
func (g *Group) Close() error {
	g.stop()
	g.wg.Wait()
	var errs []error
	for _, m := range g.members {
		errs = append(errs, m.src.Close())
	}
	return errors.Join(errs...)
}

// Stats reports the members' connection pools added together, for the
// server's pool metrics.
func (g *Group) Stats() sql.DBStats {
	var sum sql.DBStats
	for _, m := range g.members {
		s := poolStats(m.src)
		sum.MaxOpenConnections += s.MaxOpenConnections
		sum.OpenConnections += s.OpenConnections
		sum.InUse += s.InUse
		sum.Idle += s.Idle
		sum.WaitCount += s.WaitCount
		sum.WaitDuration += s.WaitDuration
		sum.MaxIdleClosed += s.MaxIdleClosed
		sum.MaxIdleTimeClosed += s.MaxIdleTimeClosed
		sum.MaxLifetimeClosed += s.MaxLifetimeClosed
	}
	return sum
}

// Members reports on each member, in the order OpenGroup was given them.
func (g *Group) Members() []MemberState {
	out := make([]MemberState, len(g.members))
	for i, m := range g.members {
		m.mu.Lock()
		up := m.up
		m.mu.Unlock()
		out[i] = MemberState{Name: m.name, Up: up, Pool: poolStats(m.src),
			Statements: m.statements.Load(), Removals: m.removals.Load()}
	}
	return out
}

// poolStats is the pool state of a source that reports one.
func poolStats(src Source) sql.DBStats {
	if s, ok := src.(interface{ Stats() sql.DBStats }); ok {
		return s.Stats()
	}
	return sql.DBStats{}
}

// order is the order in which Query tries the members: those up, starting
// one further along at each call, then those taken out.
func (g *Group) order() []*member {
	n := len(g.members)
	first := int(g.turn.Add(1) % uint64(n))
	up := make([]*member, 0, n)
	var down []*member
	for i := range n {
		m := g.members[(first+i)%n]
		if m.isUp() {
			up = append(up, m)
		} else {
			down = append(down, m)
		}
	}
	return append(up, down...)
}

func (m *member) isUp() bool {
	m.mu.Lock()
	defer m.mu.Unlock()
	return m.up
}

// failed takes m out, if it is up, because of err.
func (g *Group) failed(m *member, err error) {
	m.mu.Lock()
	was := m.up
	if was {
		m.up = false
		m.backoff = g.retryMin
		m.due = time.Now().Add(m.backoff)
	}
	m.mu.Unlock()
	if !was {
		return
	}
	m.removals.Add(1)
	if g.onChange != nil {
		g.onChange(MemberChange{Name: m.name, Err: tidy(err, m.secret)})
	}
	select {
	case g.wake <- struct{}{}:
	default:
	}
}

// recovered puts m back, if it was taken out.
func (g *Group) recovered(m *member) {
	m.mu.Lock()
	was := m.up
	m.up = true
	m.mu.Unlock()
	if !was && g.onChange != nil {
		g.onChange(MemberChange{Name: m.name, Up: true})
	}
}

// probe runs until Close: it pings each member taken out when its probe is
// due, puts back those that answer, and doubles the pause of the others.
func (g *Group) probe() {
	defer g.wg.Done()
	timer := time.NewTimer(time.Hour)
	defer timer.Stop()
	for {
		timer.Reset(g.untilDue())
		select {
		case <-g.ctx.Done():
			return
		case <-g.wake:
			continue
		case <-timer.C:
		}
		var wg sync.WaitGroup
		for _, m := range g.dueMembers() {
			wg.Go(func() { g.probeMember(m) })
		}
		wg.Wait()
	}
}

// idleWait is how long the prober sleeps when every member is up; a member
// that goes down wakes it sooner.
const idleWait = time.Minute

// untilDue is the time until the next probe is due.
func (g *Group) untilDue() time.Duration {
	wait := idleWait
	now := time.Now()
	for _, m := range g.members {
		m.mu.Lock()
		if !m.up {
			wait = min(wait, max(m.due.Sub(now), 0))
		}
		m.mu.Unlock()
	}
	return wait
}

// dueMembers lists the members taken out whose probe is due.
func (g *Group) dueMembers() []*member {
	var due []*member
	now := time.Now()
	for _, m := range g.members {
		m.mu.Lock()
		if !m.up && !m.due.After(now) {
			due = append(due, m)
		}
		m.mu.Unlock()
	}
	return due
}

// probeMember pings m, bounded by the connect timeout and by Close.
func (g *Group) probeMember(m *member) {
	ctx, cancel := context.WithTimeout(g.ctx, g.probeFor)
	defer cancel()
	if err := m.src.Ping(ctx); err == nil {
		g.recovered(m)
		return
	}
	m.mu.Lock()
	if !m.up {
		m.backoff = min(2*m.backoff, g.retryMax)
		m.due = time.Now().Add(m.backoff)
	}
	m.mu.Unlock()
}

// memberRows is a cursor of a member; a connection failure while it reads
// takes the member out.
type memberRows struct {
	Rows
	ctx      context.Context
	g        *Group
	m        *member
	reported bool
}

// Err implements Rows.
func (r *memberRows) Err() error {
	err := r.Rows.Err()
	if err != nil && !r.reported && r.ctx.Err() == nil && IsUnavailable(err) {
		r.reported = true
		r.g.failed(r.m, err)
	}
	return err
}
