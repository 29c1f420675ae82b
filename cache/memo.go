package cache

import (
	"encoding/json"
	"fmt"
	"os"
	"path/filepath"
	"sync"

	bolt "go.etcd.io/bbolt"
)

type fileMemo struct {
	fileStat
	Digest Digest `json:"digest"`
}

// Hasher digests raw input files, remembering each digest against the
// file's (path, size, mtime, inode) so an unchanged file is never read
// twice. Updates are buffered and written by Flush in one transaction.
type Hasher struct {
	s       *Store
	mu      sync.Mutex
	pending map[string]fileMemo
	memo    map[string]fileMemo // read ahead by Prefetch
	// Rehashed counts files read because their stat changed or was new.
	Rehashed int
}

// NewHasher starts a hashing session on the store.
func (s *Store) NewHasher() *Hasher {
	return &Hasher{s: s, pending: map[string]fileMemo{}}
}

// Prefetch reads the memos of many files in one index transaction, so a
// plan over thousands of raw files costs one read, not thousands.
func (h *Hasher) Prefetch(paths []string) {
	h.mu.Lock()
	defer h.mu.Unlock()
	if h.memo == nil {
		h.memo = map[string]fileMemo{}
	}
	h.s.view(func(tx *bolt.Tx) error {
		b := tx.Bucket(bucketFiles)
		for _, p := range paths {
			abs, err := filepath.Abs(p)
			if err != nil {
				continue
			}
			if v := b.Get([]byte(abs)); v != nil {
				var m fileMemo
				if json.Unmarshal(v, &m) == nil {
					h.memo[abs] = m
				}
			}
		}
		return nil
	})
}

// File returns the content digest of the file at path.
func (h *Hasher) File(path string) (Digest, error) {
	abs, err := filepath.Abs(path)
	if err != nil {
		return Digest{}, err
	}
	fi, err := os.Stat(abs)
	if err != nil {
		return Digest{}, err
	}
	if !fi.Mode().IsRegular() {
		return Digest{}, fmt.Errorf("%s is not a regular file", abs)
	}
	st := statOf(fi)
	h.mu.Lock()
	if m, ok := h.pending[abs]; ok && m.fileStat == st {
		h.mu.Unlock()
		return m.Digest, nil
	}
	memo, found := h.memo[abs]
	h.mu.Unlock()
	if found && memo.fileStat == st {
		return memo.Digest, nil
	}
	found = false
	h.s.view(func(tx *bolt.Tx) error {
		if v := tx.Bucket(bucketFiles).Get([]byte(abs)); v != nil {
			found = json.Unmarshal(v, &memo) == nil
		}
		return nil
	})
	if found && memo.fileStat == st {
		return memo.Digest, nil
	}
	d, _, err := HashFile(abs)
	if err != nil {
		return Digest{}, err
	}
	h.mu.Lock()
	h.pending[abs] = fileMemo{fileStat: st, Digest: d}
	h.Rehashed++
	h.mu.Unlock()
	return d, nil
}

// Flush records the digests computed since the last flush.
func (h *Hasher) Flush() error {
	h.mu.Lock()
	defer h.mu.Unlock()
	if len(h.pending) == 0 || h.s.db.IsReadOnly() {
		return nil
	}
	err := h.s.update(func(tx *bolt.Tx) error {
		b := tx.Bucket(bucketFiles)
		for p, m := range h.pending {
			v, _ := json.Marshal(m)
			if err := b.Put([]byte(p), v); err != nil {
				return err
			}
		}
		return nil
	})
	if err == nil {
		h.pending = map[string]fileMemo{}
	}
	return err
}
