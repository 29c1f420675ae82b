package cache

import (
	"encoding/binary"
	"encoding/hex"
	"fmt"
	"io"
	"math"
	"os"
	"sync"

	"github.com/zeebo/blake3"
)

// Digest is a BLAKE3-256 content address.
type Digest [32]byte

// String is the lowercase hex form used in file names and records.
func (d Digest) String() string { return hex.EncodeToString(d[:]) }

// Short is the first 12 hex digits, for people.
func (d Digest) Short() string { return d.String()[:12] }

// IsZero reports whether d is the zero digest (unknown).
func (d Digest) IsZero() bool { return d == Digest{} }

// ParseDigest reads the hex form.
func ParseDigest(s string) (Digest, error) {
	var d Digest
	b, err := hex.DecodeString(s)
	if err != nil || len(b) != len(d) {
		return d, fmt.Errorf("not a 64-digit hex digest: %q", s)
	}
	copy(d[:], b)
	return d, nil
}

// MarshalText implements encoding.TextMarshaler.
func (d Digest) MarshalText() ([]byte, error) { return []byte(d.String()), nil }

// UnmarshalText implements encoding.TextUnmarshaler.
func (d *Digest) UnmarshalText(b []byte) error {
	x, err := ParseDigest(string(b))
	if err != nil {
		return err
	}
	*d = x
	return nil
}

// Sum digests a byte slice.
func Sum(b []byte) Digest {
	return Digest(blake3.Sum256(b))
}

var bufPool = sync.Pool{New: func() any { b := make([]byte, 1<<20); return &b }}

// HashReader digests a stream and returns its length.
func HashReader(r io.Reader) (Digest, int64, error) {
	h := blake3.New()
	bp := bufPool.Get().(*[]byte)
	defer bufPool.Put(bp)
	n, err := io.CopyBuffer(h, r, *bp)
	if err != nil {
		return Digest{}, n, err
	}
	var d Digest
	copy(d[:], h.Sum(nil))
	return d, n, nil
}

// HashFile digests a file's content.
func HashFile(path string) (Digest, int64, error) {
	f, err := os.Open(path)
	if err != nil {
		return Digest{}, 0, err
	}
	defer f.Close()
	return HashReader(f)
}

// Key builds a canonical, unambiguous encoding of typed fields and digests
// it. Every field is tagged and length-prefixed, so ("ab","c") and
// ("a","bc") never collide, and the encoding does not depend on YAML text,
// map order or float formatting.
type Key struct {
	h *blake3.Hasher
}

// NewKey starts a key in a named domain (for example "instance/v1").
func NewKey(domain string) *Key {
	k := &Key{h: blake3.New()}
	k.String(domain)
	return k
}

func (k *Key) tag(t byte, n int) {
	var b [9]byte
	b[0] = t
	binary.LittleEndian.PutUint64(b[1:], uint64(n))
	k.h.Write(b[:])
}

// String adds a string field.
func (k *Key) String(s string) *Key {
	k.tag('s', len(s))
	k.h.Write([]byte(s))
	return k
}

// Bytes adds a byte field (for example canonical JSON).
func (k *Key) Bytes(b []byte) *Key {
	k.tag('b', len(b))
	k.h.Write(b)
	return k
}

// Int adds an integer field.
func (k *Key) Int(i int64) *Key {
	k.tag('i', 8)
	var b [8]byte
	binary.LittleEndian.PutUint64(b[:], uint64(i))
	k.h.Write(b[:])
	return k
}

// Float adds a float field by its IEEE bits (so 0.1 is always 0.1).
func (k *Key) Float(f float64) *Key {
	k.tag('f', 8)
	var b [8]byte
	binary.LittleEndian.PutUint64(b[:], math.Float64bits(f))
	k.h.Write(b[:])
	return k
}

// Digest adds a digest field.
func (k *Key) Digest(d Digest) *Key {
	k.tag('d', len(d))
	k.h.Write(d[:])
	return k
}

// Sum finishes the key.
func (k *Key) Sum() Digest {
	var d Digest
	copy(d[:], k.h.Sum(nil))
	return d
}
