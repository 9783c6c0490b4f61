package ingest

import (
	"testing"

	"github.com/apache/arrow-go/v18/arrow/memory"
)

// A failed read gives back what it allocated and still holds, once: the
// frees that come later for those buffers are ignored. What a read that
// succeeds allocates stays the batch's until it is freed.
func TestBatchScope(t *testing.T) {
	mem := memory.NewCheckedAllocator(memory.NewGoAllocator())
	defer mem.AssertSize(t, 0)
	scope := newBatchScope(mem)

	kept := scope.Allocate(100) // before any read: not the read's
	scope.begin()
	batch := scope.Allocate(10)
	scope.end(false)
	if got := mem.CurrentAlloc(); got != 110 {
		t.Fatalf("%d bytes outstanding after a read that succeeded, want 110", got)
	}

	scope.begin()
	lost := scope.Allocate(64)
	freed := scope.Allocate(32)
	scope.Free(freed)
	grown := scope.Reallocate(200, scope.Allocate(8))
	scope.end(true)
	if got := mem.CurrentAlloc(); got != 110 {
		t.Fatalf("%d bytes outstanding after a read that failed, want the 110 held before it", got)
	}
	scope.Free(lost) // a reader closing what it kept: already given back
	scope.Free(grown)
	scope.Free(batch)
	scope.Free(kept)
}
