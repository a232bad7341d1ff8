// Package bufpool recycles the byte buffers that answers are written into
// before they go to the client. Most answers are small, and a fresh buffer
// for each would make the garbage collector run every few requests on a busy
// endpoint.
package bufpool

import "sync"

// startSize is the capacity of a new buffer; maxKept the largest one kept
// for reuse, so that one huge answer does not stay in memory.
const (
	startSize = 4 << 10
	maxKept   = 64 << 10
)

var pool = sync.Pool{New: func() any {
	b := make([]byte, 0, startSize)
	return &b
}}

// Get returns an empty buffer. Give it back with Put when done, storing the
// grown slice in it first.
func Get() *[]byte {
	b := pool.Get().(*[]byte)
	*b = (*b)[:0]
	return b
}

// Put gives b back for reuse; its bytes must not be used after.
func Put(b *[]byte) {
	if cap(*b) <= maxKept {
		pool.Put(b)
	}
}
