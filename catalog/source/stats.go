package source

import "database/sql"

// Stats reports the connection pool's state, for the server's pool metrics.
func (s *mysqlSource) Stats() sql.DBStats { return s.db.Stats() }

// Stats reports the connection pool's state, for the server's pool metrics.
func (s *sqliteSource) Stats() sql.DBStats { return s.db.Stats() }

// Stats reports the connection pool's state in database/sql's terms, for the
// server's pool metrics.
func (s *pgSource) Stats() sql.DBStats {
	st := s.pool.Stat()
	return sql.DBStats{
		MaxOpenConnections: int(st.MaxConns()),
		OpenConnections:    int(st.TotalConns()),
		InUse:              int(st.AcquiredConns()),
		Idle:               int(st.IdleConns()),
		WaitCount:          st.EmptyAcquireCount(),
		WaitDuration:       st.AcquireDuration(),
	}
}
