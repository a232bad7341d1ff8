// Package faults holds veneer's fault tests: each starts throw-away database
// servers of its own on loopback (PostgreSQL clusters made with initdb, a
// streaming replica made with pg_basebackup, a MariaDB server made with
// mariadb-install-db), serves them with the veneer binary, and breaks them
// under a steady, bounded query load: restarts, connections killed from the
// database's side, lock waits, a replica stopped, a connection cut while an
// answer streams. The tests check what clients see (clean 503 answers, never
// a hang or a truncated answer that parses as complete), the readiness probe,
// the time service takes to come back, and that goroutines and connections
// return to their baseline.
//
// The package has no code outside its tests. The tests skip with "no tool:"
// when the database programs are missing. VENEER_FAULTS_LONG=1 makes the
// outages and the load longer.
package faults
