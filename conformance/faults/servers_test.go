package faults

import (
	"context"
	"database/sql"
	"fmt"
	"net"
	"os"
	"os/exec"
	"os/user"
	"path/filepath"
	"slices"
	"strconv"
	"strings"
	"syscall"
	"testing"
	"time"

	"github.com/go-sql-driver/mysql"
	"github.com/jackc/pgx/v5"

	"veneer/cmd/veneer/demo"
)

// The throw-away database servers. Each lives in a directory of its own
// under the system's temporary directory, owned by the database's system
// user when the test runs as root, listens on a free loopback port, and is
// stopped and removed when the test ends.

// noTool skips the test for want of a program; under CI=true .ci/run turns
// the skip into a failure.
func noTool(t *testing.T, format string, args ...any) {
	t.Helper()
	t.Skipf("no tool: "+format, args...)
}

// freePort returns a loopback port nobody listens on now.
func freePort(t *testing.T) int {
	t.Helper()
	ln, err := net.Listen("tcp", "127.0.0.1:0")
	if err != nil {
		t.Fatal(err)
	}
	defer ln.Close()
	return ln.Addr().(*net.TCPAddr).Port
}

// ownedDir makes an empty directory owned by the system user owner (when
// running as root), removed when the test ends.
func ownedDir(t *testing.T, owner string) string {
	t.Helper()
	dir, err := os.MkdirTemp("", "veneer-faults-")
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() { os.RemoveAll(dir) })
	if os.Geteuid() == 0 {
		u, err := user.Lookup(owner)
		if err != nil {
			noTool(t, "no %s system user to run the database as: %v", owner, err)
		}
		uid, _ := strconv.Atoi(u.Uid)
		gid, _ := strconv.Atoi(u.Gid)
		if err := os.Chown(dir, uid, gid); err != nil {
			t.Fatal(err)
		}
	}
	return dir
}

// run runs a database program, as owner when root, within a minute, and
// fails the test with its output when it fails.
func run(t *testing.T, owner string, name string, args ...string) {
	t.Helper()
	if err := runErr(owner, name, args...); err != nil {
		t.Fatal(err)
	}
}

func runErr(owner string, name string, args ...string) error {
	ctx, cancel := context.WithTimeout(context.Background(), time.Minute)
	defer cancel()
	if os.Geteuid() == 0 {
		args = append([]string{"-u", owner, "--", name}, args...)
		name = "runuser"
	}
	cmd := exec.CommandContext(ctx, name, args...)
	cmd.Dir = os.TempDir() // a directory the database user may enter
	out, err := cmd.CombinedOutput()
	if err != nil {
		return fmt.Errorf("%s %s: %v\n%s", name, strings.Join(args, " "), err, out)
	}
	return nil
}

// --- PostgreSQL ------------------------------------------------------------

// pgBin finds the directory of initdb, pg_ctl and pg_basebackup: the newest
// Debian version directory, or the PATH.
func pgBin(t *testing.T) string {
	t.Helper()
	dirs, _ := filepath.Glob("/usr/lib/postgresql/*/bin")
	slices.SortFunc(dirs, func(a, b string) int { return versionOf(b) - versionOf(a) })
	for _, d := range dirs {
		if _, err := os.Stat(filepath.Join(d, "pg_basebackup")); err == nil {
			return d
		}
	}
	for _, tool := range []string{"initdb", "pg_ctl", "pg_basebackup"} {
		if _, err := exec.LookPath(tool); err != nil {
			noTool(t, "%s is not installed (Debian package postgresql)", tool)
		}
	}
	p, _ := exec.LookPath("initdb")
	return filepath.Dir(p)
}

// versionOf reads the major version out of /usr/lib/postgresql/N/bin.
func versionOf(dir string) int {
	n, _ := strconv.Atoi(filepath.Base(filepath.Dir(dir)))
	return n
}

// pgServer is a throw-away PostgreSQL cluster.
type pgServer struct {
	t    *testing.T
	bin  string
	dir  string // owned by postgres: data/, the socket, the log
	Port int
}

// veneerRole is the role veneer logs in as; the test's own sessions use the
// superuser postgres, so that the role tells veneer's sessions apart.
const veneerRole = "veneer_reader"

// veneerPassword is the password in veneer's DSN, which must never show in
// its logs or metrics. Trust authentication ignores it.
const veneerPassword = "Sekr1t-windfarm-pw"

func (s *pgServer) data() string { return filepath.Join(s.dir, "data") }

// newPGPrimary makes and starts a cluster with the demo database loaded and
// a role for veneer that may read it.
func newPGPrimary(t *testing.T) *pgServer {
	t.Helper()
	s := &pgServer{t: t, bin: pgBin(t), dir: ownedDir(t, "postgres"), Port: freePort(t)}
	run(t, "postgres", filepath.Join(s.bin, "initdb"), "-D", s.data(), "-U", "postgres", "--auth=trust",
		"--no-sync", "-E", "UTF8", "--locale=C")
	s.configure("wal_level = replica", "max_wal_senders = 4", "hot_standby = on")
	s.Start()
	t.Cleanup(s.stopForGood)
	conn := s.Admin()
	defer conn.Close(context.Background())
	ctx := context.Background()
	tx, err := conn.Begin(ctx)
	if err != nil {
		t.Fatal(err)
	}
	err = demo.Build(ctx, func(ctx context.Context, q string, args ...any) error {
		_, err := tx.Exec(ctx, q, args...)
		return err
	}, "postgres")
	if err == nil {
		err = tx.Commit(ctx)
	}
	if err != nil {
		t.Fatalf("loading the demo: %v", err)
	}
	for _, q := range []string{
		"CREATE ROLE " + veneerRole + " LOGIN PASSWORD '" + veneerPassword + "'",
		"GRANT SELECT ON ALL TABLES IN SCHEMA public TO " + veneerRole,
	} {
		if _, err := conn.Exec(ctx, q); err != nil {
			t.Fatalf("%s: %v", q, err)
		}
	}
	return s
}

// newPGReplica makes a streaming replica of primary with pg_basebackup -R
// and starts it on a port of its own.
func newPGReplica(t *testing.T, primary *pgServer) *pgServer {
	t.Helper()
	s := &pgServer{t: t, bin: primary.bin, dir: ownedDir(t, "postgres"), Port: freePort(t)}
	run(t, "postgres", filepath.Join(s.bin, "pg_basebackup"), "-h", "127.0.0.1", "-p", strconv.Itoa(primary.Port),
		"-U", "postgres", "-D", s.data(), "-R", "-X", "stream", "--checkpoint=fast", "--no-sync")
	s.configure()
	s.Start()
	t.Cleanup(s.stopForGood)
	return s
}

// configure appends the cluster's own settings to postgresql.conf; later
// lines win over those a base backup copied from the primary.
func (s *pgServer) configure(extra ...string) {
	s.t.Helper()
	lines := append([]string{
		"port = " + strconv.Itoa(s.Port),
		"listen_addresses = '127.0.0.1'",
		"unix_socket_directories = '" + s.dir + "'",
		"fsync = off",
		"max_connections = 60",
		"shared_buffers = 32MB",
	}, extra...)
	f, err := os.OpenFile(filepath.Join(s.data(), "postgresql.conf"), os.O_APPEND|os.O_WRONLY, 0)
	if err != nil {
		s.t.Fatal(err)
	}
	defer f.Close()
	if _, err := f.WriteString("\n# veneer fault test\n" + strings.Join(lines, "\n") + "\n"); err != nil {
		s.t.Fatal(err)
	}
}

// Start starts the cluster and waits until it accepts connections.
func (s *pgServer) Start() {
	s.t.Helper()
	run(s.t, "postgres", filepath.Join(s.bin, "pg_ctl"), "-D", s.data(), "-l", filepath.Join(s.dir, "log"), "-w", "-t", "60", "start")
}

// Stop stops the cluster: mode is fast (sessions are told to end) or
// immediate (as a crash).
func (s *pgServer) Stop(mode string) {
	s.t.Helper()
	run(s.t, "postgres", filepath.Join(s.bin, "pg_ctl"), "-D", s.data(), "-m", mode, "-w", "-t", "60", "stop")
}

func (s *pgServer) stopForGood() {
	if _, err := os.Stat(filepath.Join(s.data(), "postmaster.pid")); err == nil {
		runErr("postgres", filepath.Join(s.bin, "pg_ctl"), "-D", s.data(), "-m", "immediate", "-w", "stop")
	}
}

// DSN is what veneer opens: the reader role, with a password to keep secret.
func (s *pgServer) DSN() string {
	return fmt.Sprintf("postgres://%s:%s@127.0.0.1:%d/postgres?sslmode=disable", veneerRole, veneerPassword, s.Port)
}

// Admin connects as the superuser.
func (s *pgServer) Admin() *pgx.Conn {
	s.t.Helper()
	ctx, cancel := context.WithTimeout(context.Background(), 10*time.Second)
	defer cancel()
	conn, err := pgx.Connect(ctx, fmt.Sprintf("postgres://postgres@127.0.0.1:%d/postgres?sslmode=disable", s.Port))
	if err != nil {
		s.t.Fatal(err)
	}
	return conn
}

// Up reports whether the cluster accepts a connection and answers.
func (s *pgServer) Up() bool {
	ctx, cancel := context.WithTimeout(context.Background(), time.Second)
	defer cancel()
	conn, err := pgx.Connect(ctx, fmt.Sprintf("postgres://postgres@127.0.0.1:%d/postgres?sslmode=disable&connect_timeout=1", s.Port))
	if err != nil {
		return false
	}
	defer conn.Close(ctx)
	return conn.Ping(ctx) == nil
}

// VeneerSessions counts veneer's sessions as the server sees them.
func (s *pgServer) VeneerSessions() int {
	s.t.Helper()
	conn := s.Admin()
	defer conn.Close(context.Background())
	var n int
	if err := conn.QueryRow(context.Background(), "SELECT count(*) FROM pg_stat_activity WHERE usename = $1", veneerRole).Scan(&n); err != nil {
		s.t.Fatal(err)
	}
	return n
}

// KillVeneer ends every veneer session from the server's side and returns
// how many it ended.
func (s *pgServer) KillVeneer() int {
	s.t.Helper()
	conn := s.Admin()
	defer conn.Close(context.Background())
	var n int
	err := conn.QueryRow(context.Background(),
		"SELECT count(*) FROM (SELECT pg_terminate_backend(pid) FROM pg_stat_activity WHERE usename = $1) AS k", veneerRole).Scan(&n)
	if err != nil {
		s.t.Fatal(err)
	}
	return n
}

// --- MariaDB -----------------------------------------------------------------

// mariaServer is a throw-away MariaDB server.
type mariaServer struct {
	t    *testing.T
	dir  string // owned by mysql: data/, the socket, the log
	Port int
	cmd  *exec.Cmd
	exit chan error
}

// mariadbd is where Debian installs the server program.
const mariadbd = "/usr/sbin/mariadbd"

// mariaDatabase is the database the demo is loaded into.
const mariaDatabase = "windfarm"

// newMaria installs a data directory, starts the server and loads the demo
// with a user for veneer that may read it.
func newMaria(t *testing.T) *mariaServer {
	t.Helper()
	if _, err := exec.LookPath("mariadb-install-db"); err != nil {
		noTool(t, "mariadb-install-db is not installed (Debian package mariadb-server)")
	}
	if _, err := os.Stat(mariadbd); err != nil {
		noTool(t, "%s is not installed (Debian package mariadb-server)", mariadbd)
	}
	s := &mariaServer{t: t, dir: ownedDir(t, "mysql"), Port: freePort(t)}
	args := []string{"--no-defaults", "--datadir=" + s.data(), "--auth-root-authentication-method=normal", "--skip-test-db"}
	if os.Geteuid() == 0 {
		args = append(args, "--user=mysql")
	}
	ctx, cancel := context.WithTimeout(context.Background(), 2*time.Minute)
	defer cancel()
	if out, err := exec.CommandContext(ctx, "mariadb-install-db", args...).CombinedOutput(); err != nil {
		t.Fatalf("mariadb-install-db: %v\n%s", err, out)
	}
	s.Start()
	t.Cleanup(func() {
		if s.cmd != nil {
			s.cmd.Process.Kill()
			<-s.exit
		}
	})
	db := s.Admin("")
	defer db.Close()
	for _, q := range []string{
		"CREATE DATABASE " + mariaDatabase + " CHARACTER SET utf8mb4",
		"CREATE USER '" + veneerRole + "'@'127.0.0.1' IDENTIFIED BY '" + veneerPassword + "'",
		"GRANT SELECT ON " + mariaDatabase + ".* TO '" + veneerRole + "'@'127.0.0.1'",
	} {
		if _, err := db.Exec(q); err != nil {
			t.Fatalf("%s: %v", q, err)
		}
	}
	demoDB := s.Admin(mariaDatabase)
	defer demoDB.Close()
	tx, err := demoDB.Begin()
	if err != nil {
		t.Fatal(err)
	}
	err = demo.Build(context.Background(), func(ctx context.Context, q string, args ...any) error {
		_, err := tx.ExecContext(ctx, q, args...)
		return err
	}, "mysql")
	if err == nil {
		err = tx.Commit()
	}
	if err != nil {
		t.Fatalf("loading the demo: %v", err)
	}
	return s
}

func (s *mariaServer) data() string { return filepath.Join(s.dir, "data") }

// Start starts the server and waits until it answers.
func (s *mariaServer) Start() {
	s.t.Helper()
	args := []string{"--no-defaults", "--datadir=" + s.data(), "--port=" + strconv.Itoa(s.Port),
		"--bind-address=127.0.0.1", "--socket=" + filepath.Join(s.dir, "sock"), "--pid-file=" + filepath.Join(s.dir, "pid"),
		"--log-error=" + filepath.Join(s.dir, "log"), "--skip-name-resolve", "--skip-log-bin",
		"--innodb-buffer-pool-size=32M", "--max-connections=60", "--innodb-flush-log-at-trx-commit=0"}
	if os.Geteuid() == 0 {
		args = append(args, "--user=mysql")
	}
	s.cmd = exec.Command(mariadbd, args...)
	s.cmd.SysProcAttr = &syscall.SysProcAttr{Pdeathsig: syscall.SIGKILL} // never outlive the test
	if err := s.cmd.Start(); err != nil {
		s.t.Fatal(err)
	}
	s.exit = make(chan error, 1)
	go func(c *exec.Cmd, exit chan error) { exit <- c.Wait() }(s.cmd, s.exit)
	for deadline := time.Now().Add(60 * time.Second); !s.Up(); {
		select {
		case err := <-s.exit:
			log, _ := os.ReadFile(filepath.Join(s.dir, "log"))
			s.t.Fatalf("mariadbd exited: %v\n%s", err, log)
		default:
		}
		if time.Now().After(deadline) {
			s.t.Fatal("mariadbd does not answer after 60s")
		}
		time.Sleep(100 * time.Millisecond)
	}
}

// Stop shuts the server down with SIGTERM (a normal shutdown: sessions are
// told the server goes away) and waits for it to exit.
func (s *mariaServer) Stop() {
	s.t.Helper()
	s.cmd.Process.Signal(syscall.SIGTERM)
	select {
	case <-s.exit:
	case <-time.After(60 * time.Second):
		s.t.Fatal("mariadbd did not stop within 60s of SIGTERM")
	}
	s.cmd = nil
}

// DSN is what veneer opens.
func (s *mariaServer) DSN() string {
	return fmt.Sprintf("mysql://%s:%s@127.0.0.1:%d/%s", veneerRole, veneerPassword, s.Port, mariaDatabase)
}

// Admin connects as root to database (none when "").
func (s *mariaServer) Admin(database string) *sql.DB {
	s.t.Helper()
	cfg := mysql.NewConfig()
	cfg.User, cfg.Net, cfg.Addr, cfg.DBName = "root", "tcp", fmt.Sprintf("127.0.0.1:%d", s.Port), database
	cfg.Timeout = 5 * time.Second
	c, err := mysql.NewConnector(cfg)
	if err != nil {
		s.t.Fatal(err)
	}
	return sql.OpenDB(c)
}

// Up reports whether the server answers.
func (s *mariaServer) Up() bool {
	cfg := mysql.NewConfig()
	cfg.User, cfg.Net, cfg.Addr, cfg.Timeout = "root", "tcp", fmt.Sprintf("127.0.0.1:%d", s.Port), time.Second
	c, err := mysql.NewConnector(cfg)
	if err != nil {
		return false
	}
	db := sql.OpenDB(c)
	defer db.Close()
	ctx, cancel := context.WithTimeout(context.Background(), time.Second)
	defer cancel()
	return db.PingContext(ctx) == nil
}

// VeneerSessions counts veneer's sessions as the server sees them.
func (s *mariaServer) VeneerSessions() int {
	s.t.Helper()
	db := s.Admin("")
	defer db.Close()
	var n int
	if err := db.QueryRow("SELECT COUNT(*) FROM information_schema.PROCESSLIST WHERE USER = ?", veneerRole).Scan(&n); err != nil {
		s.t.Fatal(err)
	}
	return n
}

// KillVeneer kills every veneer session with KILL and returns how many.
func (s *mariaServer) KillVeneer() int {
	s.t.Helper()
	db := s.Admin("")
	defer db.Close()
	rows, err := db.Query("SELECT ID FROM information_schema.PROCESSLIST WHERE USER = ?", veneerRole)
	if err != nil {
		s.t.Fatal(err)
	}
	var ids []int64
	for rows.Next() {
		var id int64
		rows.Scan(&id)
		ids = append(ids, id)
	}
	rows.Close()
	n := 0
	for _, id := range ids {
		// KILL takes no placeholder in MariaDB's text protocol; the id is a
		// number the server gave.
		if _, err := db.Exec("KILL " + strconv.FormatInt(id, 10)); err == nil {
			n++
		}
	}
	return n
}
