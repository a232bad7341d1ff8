package source

import "github.com/prometheus/client_golang/prometheus"

// groupCollector reports a group's members for Prometheus. Members are
// labelled by their configured names, never by their DSNs.
type groupCollector struct {
	g                                     *Group
	up, open, inUse, statements, removals *prometheus.Desc
}

// Collector returns the Prometheus collector of the group's members, their
// series labelled source=name and member=the member's name: whether each is
// up, its open and busy connections, the statements it started and the times
// it was taken out. The pools added together are what Stats reports.
func (g *Group) Collector(name string) prometheus.Collector {
	d := func(metric, help string) *prometheus.Desc {
		return prometheus.NewDesc(metric, help, []string{"member"}, prometheus.Labels{"source": name})
	}
	return &groupCollector{
		g:          g,
		up:         d("veneer_db_member_up", "1 while the member of a replicated source takes statements, 0 while it is taken out."),
		open:       d("veneer_db_member_connections_open", "Connections open to the member, in use or idle."),
		inUse:      d("veneer_db_member_connections_in_use", "Connections to the member running a statement."),
		statements: d("veneer_db_member_statements_total", "Statements started on the member."),
		removals:   d("veneer_db_member_removals_total", "Times the member was taken out because its connection failed."),
	}
}

// Describe implements prometheus.Collector.
func (c *groupCollector) Describe(ch chan<- *prometheus.Desc) {
	for _, d := range []*prometheus.Desc{c.up, c.open, c.inUse, c.statements, c.removals} {
		ch <- d
	}
}

// Collect implements prometheus.Collector.
func (c *groupCollector) Collect(ch chan<- prometheus.Metric) {
	for _, m := range c.g.Members() {
		up := 0.0
		if m.Up {
			up = 1
		}
		ch <- prometheus.MustNewConstMetric(c.up, prometheus.GaugeValue, up, m.Name)
		ch <- prometheus.MustNewConstMetric(c.open, prometheus.GaugeValue, float64(m.Pool.OpenConnections), m.Name)
		ch <- prometheus.MustNewConstMetric(c.inUse, prometheus.GaugeValue, float64(m.Pool.InUse), m.Name)
		ch <- prometheus.MustNewConstMetric(c.statements, prometheus.CounterValue, float64(m.Statements), m.Name)
		ch <- prometheus.MustNewConstMetric(c.removals, prometheus.CounterValue, float64(m.Removals), m.Name)
	}
}
