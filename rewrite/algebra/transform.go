package algebra

// Transform rewrites the tree n bottom-up: it rebuilds each node whose children
// changed, then calls f on it. f returns the node to use and whether it made a
// change. Transform reports whether anything changed; unchanged subtrees are
// shared with the input, not copied.
func Transform(n Node, f func(Node) (Node, bool)) (Node, bool) {
	kids := n.Children()
	changed := false
	if len(kids) > 0 {
		next := make([]Node, len(kids))
		for i, k := range kids {
			var c bool
			next[i], c = Transform(k, f)
			changed = changed || c
		}
		if changed {
			n = n.WithChildren(next...)
		}
	}
	m, c := f(n)
	return m, changed || c
}

// InScope returns the variables that are in scope in n (§18.2.1), in the order
// they first appear, hidden ones included. Variables used only in filters, in
// EXISTS, or on the right of MINUS are not in scope.
func InScope(n Node) []Var {
	var vs []Var
	seen := map[Var]bool{}
	add := func(items ...Item) {
		for _, it := range items {
			if v, ok := it.(Var); ok && !seen[v] {
				seen[v] = true
				vs = append(vs, v)
			}
		}
	}
	var walk func(Node)
	walk = func(n Node) {
		switch n := n.(type) {
		case BGP:
			for _, t := range n.Patterns {
				add(t.S, t.P, t.O)
			}
		case PathPattern:
			add(n.S, n.O)
		case Minus:
			walk(n.Left)
		case Graph:
			add(n.Name)
			walk(n.Input)
		case Service:
			add(n.Endpoint)
			walk(n.Input)
		case Extend:
			walk(n.Input)
			add(n.Var)
		case Values:
			for _, v := range n.Vars {
				add(v)
			}
		case Group:
			for _, k := range n.Keys {
				if k.Var != "" {
					add(k.Var)
				}
			}
			for _, a := range n.Aggs {
				add(a.Var)
			}
		case Project:
			for _, v := range n.Vars {
				add(v)
			}
		default:
			for _, c := range n.Children() {
				walk(c)
			}
		}
	}
	walk(n)
	return vs
}
