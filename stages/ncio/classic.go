package ncio

import (
	"bufio"
	"encoding/binary"
	"errors"
	"fmt"
	"io"
	"os"
)

// classicDataEnd parses the header of a netCDF-3 file (CDF-1, CDF-2 or
// CDF-5, as laid out in the netCDF file format specification) and returns
// the offset where the last variable's data ends. The C library reads a
// truncated netCDF-3 file without complaint, returning zeros past the end
// of the file, so Open compares this with the file size.
//
// ok is false when the header uses the streaming record count, in which
// case the size cannot be predicted.
func classicDataEnd(path string) (end int64, ok bool, err error) {
	fh, err := os.Open(path)
	if err != nil {
		return 0, false, err
	}
	defer fh.Close()
	r := &hdrReader{r: bufio.NewReader(fh)}
	magic := r.bytes(4)
	if r.err != nil || string(magic[:3]) != "CDF" {
		return 0, false, errors.New("not a netCDF-3 header")
	}
	version := magic[3]
	r.wide = version == 5                    // CDF-5: 64-bit counts and lengths
	offset64 := version == 2 || version == 5 // 64-bit begin offsets
	numrecs := r.count()
	streaming := !r.wide && numrecs == 0xFFFFFFFF
	// Dimensions.
	var dimLens []int64
	recDim := -1
	if n := r.list(0x0A); n > 0 {
		for i := 0; i < int(n); i++ {
			r.name()
			l := r.count()
			if l == 0 {
				recDim = i
			}
			dimLens = append(dimLens, int64(l))
		}
	}
	r.attrs()
	type varInfo struct {
		begin, size int64
		record      bool
	}
	var vars []varInfo
	var recsize int64
	if n := r.list(0x0B); n > 0 {
		for i := 0; i < int(n); i++ {
			r.name()
			nd := r.count()
			if nd > 1024 {
				return 0, false, errors.New("implausible number of dimensions")
			}
			vi := varInfo{}
			elems := int64(1)
			for j := 0; j < int(nd); j++ {
				id := int(r.count())
				if id < 0 || id >= len(dimLens) {
					return 0, false, errors.New("bad dimension id")
				}
				if id == recDim && j == 0 {
					vi.record = true
					continue
				}
				elems *= dimLens[id]
			}
			r.attrs()
			t := Type(r.u32())
			r.count() // vsize: unreliable above 4 GiB, recomputed below
			if offset64 {
				vi.begin = int64(r.u64())
			} else {
				vi.begin = int64(r.u32())
			}
			vi.size = elems * int64(t.size())
			if vi.record {
				recsize += (vi.size + 3) &^ 3
			}
			vars = append(vars, vi)
		}
	}
	if r.err != nil {
		return 0, false, r.err
	}
	if streaming {
		return 0, false, nil
	}
	nrec := 0
	for _, v := range vars {
		if v.record {
			nrec++
		}
	}
	for _, v := range vars {
		e := v.begin + v.size
		if v.record {
			if numrecs == 0 {
				continue
			}
			step := recsize
			if nrec == 1 {
				step = v.size // a lone record variable is not padded
			}
			e = v.begin + int64(numrecs-1)*step + v.size
		}
		if e > end {
			end = e
		}
	}
	return end, true, nil
}

// hdrReader reads big-endian header fields and keeps the first error.
type hdrReader struct {
	r    *bufio.Reader
	wide bool
	err  error
}

func (h *hdrReader) bytes(n int) []byte {
	b := make([]byte, n)
	if h.err == nil {
		if _, err := io.ReadFull(h.r, b); err != nil {
			h.err = fmt.Errorf("header cut short: %w", err)
		}
	}
	return b
}

func (h *hdrReader) u32() uint32 { return binary.BigEndian.Uint32(h.bytes(4)) }
func (h *hdrReader) u64() uint64 { return binary.BigEndian.Uint64(h.bytes(8)) }

// count reads a non-negative count: 32-bit, or 64-bit in CDF-5.
func (h *hdrReader) count() uint64 {
	if h.wide {
		return h.u64()
	}
	return uint64(h.u32())
}

func (h *hdrReader) skip(n uint64) {
	if h.err != nil {
		return
	}
	if n > 1<<31 {
		h.err = errors.New("implausible header field length")
		return
	}
	if _, err := h.r.Discard(int(n)); err != nil {
		h.err = fmt.Errorf("header cut short: %w", err)
	}
}

func (h *hdrReader) name() {
	n := h.count()
	h.skip((n + 3) &^ 3)
}

// list reads a list tag and element count; ABSENT (0, 0) gives 0.
func (h *hdrReader) list(tag uint32) uint64 {
	t := h.u32()
	n := h.count()
	if h.err == nil && t != tag && !(t == 0 && n == 0) {
		h.err = fmt.Errorf("unexpected header tag %#x", t)
	}
	return n
}

func (h *hdrReader) attrs() {
	n := h.list(0x0C)
	for i := uint64(0); i < n && h.err == nil; i++ {
		h.name()
		t := Type(h.u32())
		cnt := h.count()
		sz := uint64(t.size())
		if sz == 0 {
			h.err = fmt.Errorf("attribute of unknown type %d", t)
			return
		}
		h.skip((cnt*sz + 3) &^ 3)
	}
}
