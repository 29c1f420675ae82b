package cache_test

import (
	"errors"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"github.com/squall-climate/squall/cache"
)

// BLAKE3 of the empty input, from the BLAKE3 specification's test vectors
// (github.com/BLAKE3-team/BLAKE3, test_vectors.json, input_len 0).
const blake3Empty = "af1349b9f5f9a1a6a0404dea36dcc9499bcb25c9adc112b7cc9a93cae41f3262"

func TestDigestOfEmptyInputMatchesSpec(t *testing.T) {
	if got := cache.Sum(nil).String(); got != blake3Empty {
		t.Fatalf("BLAKE3(\"\") = %s, want %s", got, blake3Empty)
	}
	d, err := cache.ParseDigest(blake3Empty)
	if err != nil || d.String() != blake3Empty {
		t.Fatalf("parse round trip: %v %s", err, d)
	}
	if _, err := cache.ParseDigest("xyz"); err == nil {
		t.Fatal("accepted a bad digest")
	}
}

func TestKeyEncodingIsUnambiguous(t *testing.T) {
	a := cache.NewKey("t").String("ab").String("c").Sum()
	b := cache.NewKey("t").String("a").String("bc").Sum()
	if a == b {
		t.Fatal(`("ab","c") and ("a","bc") collide`)
	}
	if cache.NewKey("t").Float(0.1).Sum() != cache.NewKey("t").Float(0.1).Sum() {
		t.Fatal("keys are not deterministic")
	}
}

func commitOne(t *testing.T, s *cache.Store, key cache.Digest, content string) *cache.Record {
	t.Helper()
	work, err := s.TempDir("t")
	if err != nil {
		t.Fatal(err)
	}
	os.WriteFile(filepath.Join(work, "a.txt"), []byte(content), 0o644)
	files, err := cache.BuildManifest(work)
	if err != nil {
		t.Fatal(err)
	}
	rec := &cache.Record{Key: key, Instance: "s/c/1990/", Stage: "s", Kind: "k", Outputs: files, OutputDigest: cache.ManifestDigest(files)}
	if err := s.Commit(work, rec); err != nil {
		t.Fatal(err)
	}
	return rec
}

func TestCommitCheckAndRebuildFromReceipts(t *testing.T) {
	dir := t.TempDir()
	s, err := cache.Open(dir, cache.Options{})
	if err != nil {
		t.Fatal(err)
	}
	k1, k2 := cache.Sum([]byte("one")), cache.Sum([]byte("two"))
	r1 := commitOne(t, s, k1, "hello")
	commitOne(t, s, k2, "world")
	if got, ok, _ := s.Lookup(k1); !ok || got.OutputDigest != r1.OutputDigest {
		t.Fatal("lookup after commit failed")
	}
	if p := s.CheckOutputs(r1, true); p != nil {
		t.Fatalf("fresh outputs flagged: %v", p)
	}
	// Alter k2's output behind the store's back, then damage the index.
	os.WriteFile(filepath.Join(s.ObjectDir(k2), "a.txt"), []byte("WORLD"), 0o644)
	s.Close()
	idx := filepath.Join(dir, "index.db")
	if err := os.WriteFile(idx, []byte("this is not a bbolt file, it was overwritten"), 0o644); err != nil {
		t.Fatal(err)
	}
	_, err = cache.Open(dir, cache.Options{})
	var ce *cache.CorruptError
	if !errors.As(err, &ce) || !strings.Contains(err.Error(), "squall store rebuild") {
		t.Fatalf("damaged index: %v; want a CorruptError naming the rebuild command", err)
	}
	kept, dropped, err := cache.Rebuild(dir)
	if err != nil {
		t.Fatal(err)
	}
	if kept != 1 || dropped != 1 {
		t.Fatalf("rebuild kept %d dropped %d; want 1 and 1 (the altered one dropped)", kept, dropped)
	}
	s, err = cache.Open(dir, cache.Options{})
	if err != nil {
		t.Fatal(err)
	}
	defer s.Close()
	if _, ok, _ := s.Lookup(k1); !ok {
		t.Fatal("intact instance not recovered")
	}
	if _, ok, _ := s.Lookup(k2); ok {
		t.Fatal("altered instance trusted after rebuild")
	}
}

func TestTruncatedIndexIsReported(t *testing.T) {
	dir := t.TempDir()
	s, _ := cache.Open(dir, cache.Options{})
	commitOne(t, s, cache.Sum([]byte("x")), "x")
	s.Close()
	idx := filepath.Join(dir, "index.db")
	fi, _ := os.Stat(idx)
	os.Truncate(idx, fi.Size()/3)
	_, err := cache.Open(dir, cache.Options{})
	var ce *cache.CorruptError
	if !errors.As(err, &ce) {
		t.Fatalf("truncated index: %v; want CorruptError", err)
	}
}

func TestHasherMemoisesByStat(t *testing.T) {
	dir := t.TempDir()
	s, _ := cache.Open(filepath.Join(dir, "store"), cache.Options{})
	defer s.Close()
	p := filepath.Join(dir, "f")
	os.WriteFile(p, []byte("abc"), 0o644)
	h := s.NewHasher()
	d1, _ := h.File(p)
	h.Flush()
	h2 := s.NewHasher()
	d2, _ := h2.File(p)
	if d1 != d2 || h2.Rehashed != 0 {
		t.Fatalf("unchanged file re-hashed (%d) or digest changed", h2.Rehashed)
	}
	// BLAKE3("abc") as the reference implementation's b3sum prints it
	// (from memory; the empty-input vector above is from the spec's file).
	if d1.String() != "6437b3ac38465133ffb63b75273a8db548c558465d79db03fd359c6cd5bd9d85" {
		t.Fatalf("BLAKE3(abc) = %s", d1)
	}
}

func TestPruneKeepsOnlyReferenced(t *testing.T) {
	s, _ := cache.Open(t.TempDir(), cache.Options{})
	defer s.Close()
	k1, k2 := cache.Sum([]byte("1")), cache.Sum([]byte("2"))
	commitOne(t, s, k1, "keep")
	commitOne(t, s, k2, "drop")
	n, _, err := s.Prune(map[cache.Digest]bool{k1: true})
	if err != nil || n != 1 {
		t.Fatalf("pruned %d (%v), want 1", n, err)
	}
	if _, err := os.Stat(s.ObjectDir(k2)); !os.IsNotExist(err) {
		t.Fatal("pruned object still on disk")
	}
	if _, err := os.Stat(s.ObjectDir(k1)); err != nil {
		t.Fatal("kept object removed")
	}
}
