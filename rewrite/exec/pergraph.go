package exec

import (
	"fmt"

	"veneer/catalog/rdf"
	"veneer/rewrite"
	"veneer/rewrite/algebra"
)

// perGraphIter evaluates a pattern once in each named graph and binds the graph
// variable to the graph's name (§18.5 Graph): it reads the names first, then
// plans and runs GRAPH <name> { pattern } for one name after the other.
type perGraphIter struct {
	b     *builder
	op    *rewrite.PerGraph
	slot  int
	names []rdf.Term
	read  bool
	cur   iterator
	name  rdf.Term
}

func (b *builder) perGraph(op *rewrite.PerGraph) (node, error) {
	slot := b.l.slot(op.Var)
	scope := []int{slot}
	for _, v := range algebra.InScope(op.Input) {
		scope = append(scope, b.l.slot(v))
	}
	return node{it: &perGraphIter{b: b, op: op, slot: slot}, scope: scope}, nil
}

func (p *perGraphIter) next() ([]rdf.Term, error) {
	r := p.b.r
	if !p.read {
		p.read = true
		if err := p.readNames(); err != nil {
			return nil, err
		}
	}
	for {
		if p.cur == nil {
			if len(p.names) == 0 {
				return nil, nil
			}
			p.name, p.names = p.names[0], p.names[1:]
			if r.planner == nil {
				return nil, badQuery("GRAPH ?var over this pattern cannot be evaluated: the plan has no planner")
			}
			op, err := r.planner.PlanPattern(algebra.Graph{Name: algebra.Const{Term: p.name}, Input: p.op.Input})
			if err != nil {
				return nil, r.fail(fmt.Errorf("planning a pattern in graph %s: %w", p.name, err))
			}
			n, err := p.b.build(op)
			if err != nil {
				return nil, err
			}
			p.cur = n.it
		}
		sol, err := p.cur.next()
		if err != nil {
			return nil, err
		}
		if sol == nil {
			p.cur.close()
			p.cur = nil
			continue
		}
		r.residual++
		// A solution that binds the graph variable itself (VALUES (?g …)) must
		// agree with the graph it was found in.
		if t := sol[p.slot]; t != nil && !rdf.SameTerm(t, p.name) {
			continue
		}
		sol[p.slot] = p.name
		return sol, nil
	}
}

func (p *perGraphIter) readNames() error {
	n, err := p.b.build(p.op.Names)
	if err != nil {
		return err
	}
	defer n.it.close()
	for {
		sol, err := n.it.next()
		if err != nil {
			return err
		}
		if sol == nil {
			return nil
		}
		if t := sol[p.slot]; t != nil {
			p.names = append(p.names, t)
		}
	}
}

func (p *perGraphIter) close() {
	if p.cur != nil {
		p.cur.close()
		p.cur = nil
	}
	p.names, p.read = nil, true
}
