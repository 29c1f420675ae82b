package ncio

/*
#include <malloc.h>

static void squall_ncio_keep_heap(void) {
	// glibc trims the top of the heap (brk) whenever more than 128 kB is
	// free. HDF5 allocates and frees a chunk buffer per compressed read or
	// write, so the heap grows and shrinks at every chunk; in a
	// multi-threaded process each shrink costs a TLB shootdown on every
	// CPU and the regrown pages fault and are zeroed again. Measured on
	// this project's machines: two thirds of the CPU time of writing a
	// compressed fields file went to that.
	mallopt(M_TRIM_THRESHOLD, 256 << 20);
}
*/
import "C"

import "sync"

var keepHeapOnce sync.Once

// keepHeap raises glibc's heap trim threshold to 256 MB for the whole
// process (freed memory is kept for reuse, up to that much), once, the
// first time a file is opened or created.
func keepHeap() { keepHeapOnce.Do(func() { C.squall_ncio_keep_heap() }) }
