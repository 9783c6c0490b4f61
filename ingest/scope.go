package ingest

import (
	"sync"
	"unsafe"

	"github.com/apache/arrow-go/v18/arrow/memory"
)

// batchScope is the allocator of one input's reader. It notes what is
// allocated while one batch is read, so that a read that fails gives back
// what it allocated and still holds: arrow-go's IPC loader does not
// release the buffers it decompressed for a record batch that then fails
// to load. The frees that may come later for those buffers (a reader
// closing what it kept) are ignored, so every allocation is freed once.
type batchScope struct {
	memory.Allocator
	mu       sync.Mutex
	reading  bool
	held     map[*byte][]byte // allocated during the read in progress, not yet freed
	returned map[*byte]bool   // given back by release
}

func newBatchScope(mem memory.Allocator) *batchScope {
	return &batchScope{Allocator: mem, held: map[*byte][]byte{}, returned: map[*byte]bool{}}
}

func (s *batchScope) Allocate(size int) []byte {
	b := s.Allocator.Allocate(size)
	s.note(nil, b)
	return b
}

func (s *batchScope) Reallocate(size int, b []byte) []byte {
	nb := s.Allocator.Reallocate(size, b)
	s.note(b, nb)
	return nb
}

func (s *batchScope) Free(b []byte) {
	s.mu.Lock()
	key := unsafe.SliceData(b)
	if s.returned[key] {
		delete(s.returned, key)
		s.mu.Unlock()
		return
	}
	delete(s.held, key)
	s.mu.Unlock()
	s.Allocator.Free(b)
}

// note records that old (nil for none) became b.
func (s *batchScope) note(old, b []byte) {
	s.mu.Lock()
	defer s.mu.Unlock()
	if old != nil {
		delete(s.held, unsafe.SliceData(old))
	}
	if s.reading {
		s.held[unsafe.SliceData(b)] = b
	}
}

// begin starts the read of a batch.
func (s *batchScope) begin() {
	s.mu.Lock()
	s.reading = true
	clear(s.held)
	s.mu.Unlock()
}

// end ends the read of a batch: what it allocated now belongs to the
// batch, or, when the read failed, is given back.
func (s *batchScope) end(failed bool) {
	s.mu.Lock()
	s.reading = false
	var lost [][]byte
	if failed {
		for key, b := range s.held {
			lost = append(lost, b)
			s.returned[key] = true
		}
	}
	clear(s.held)
	s.mu.Unlock()
	for _, b := range lost {
		s.Allocator.Free(b)
	}
}
