package rewrite

import (
	"container/list"
	"strings"
	"sync"
)

// planCache remembers the plans of recent requests, by text and by shape
// (see CompileRequest): dashboards and federation engines send the same
// texts and shapes again and again, and a plan is immutable, so it can serve
// every later run of its request.
type planCache struct {
	mu    sync.Mutex
	max   int
	order *list.List // front: most recently used
	byKey map[cacheKey]*list.Element
}

type cached struct {
	key  cacheKey
	plan *Plan
}

func newPlanCache(max int) *planCache {
	return &planCache{max: max, order: list.New(), byKey: map[cacheKey]*list.Element{}}
}

// cacheKey identifies everything a plan depends on besides the catalog: the
// query text, and the rest of the request (its base IRI and dataset, and
// whether the text is a shape). The text stays a field of its own, so that
// a lookup does not copy a long query.
type cacheKey struct {
	context, text string
}

// requestKey is the key of a request's plan.
func requestKey(r Request) cacheKey {
	if r.Dataset == nil {
		return cacheKey{context: r.Base, text: r.Text}
	}
	var b strings.Builder
	b.WriteString(r.Base)
	b.WriteByte(0)
	for _, g := range r.Dataset.Default {
		b.WriteString(string(g))
		b.WriteByte(1)
	}
	b.WriteByte(0)
	for _, g := range r.Dataset.Named {
		b.WriteString(string(g))
		b.WriteByte(1)
	}
	return cacheKey{context: b.String(), text: r.Text}
}

// get returns the plan kept under key, and whether the key is known (a shape
// seen once is kept with no plan).
func (c *planCache) get(key cacheKey) (*Plan, bool) {
	c.mu.Lock()
	defer c.mu.Unlock()
	e, ok := c.byKey[key]
	if !ok {
		return nil, false
	}
	c.order.MoveToFront(e)
	return e.Value.(*cached).plan, true
}

// put keeps p under key, in place of what the key held.
func (c *planCache) put(key cacheKey, p *Plan) {
	c.mu.Lock()
	defer c.mu.Unlock()
	if e, ok := c.byKey[key]; ok {
		c.order.MoveToFront(e)
		e.Value.(*cached).plan = p
		return
	}
	c.byKey[key] = c.order.PushFront(&cached{key: key, plan: p})
	for c.order.Len() > c.max {
		last := c.order.Back()
		c.order.Remove(last)
		delete(c.byKey, last.Value.(*cached).key)
	}
}
