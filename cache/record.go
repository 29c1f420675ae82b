package cache

import (
	"encoding/json"
	"errors"
	"fmt"
	"io/fs"
	"os"
	"path/filepath"
	"sort"
	"time"

	bolt "go.etcd.io/bbolt"
)

// OutputFile is one file an instance wrote. Size and Digest describe the
// content; MTime and Inode let a reuse check skip re-hashing.
type OutputFile struct {
	Name   string `json:"name"` // slash-separated, relative to the object dir
	Size   int64  `json:"size"`
	Digest Digest `json:"digest"`
	MTime  int64  `json:"mtime_ns,omitempty"`
	Inode  uint64 `json:"inode,omitempty"`
}

// InputDigest names one input of an instance and its digest, so a later
// plan can say which input changed.
type InputDigest struct {
	Label  string `json:"label"` // e.g. "subset[control/1990]" or "file data/x.nc"
	Digest Digest `json:"digest"`
}

// Record is what the index knows of one instance attempt. Instance is the
// stable identity "stage/scenario/block/member"; Key changes with content.
type Record struct {
	Key          Digest          `json:"key"`
	Instance     string          `json:"instance"`
	Stage        string          `json:"stage"`
	Kind         string          `json:"kind"`
	KindVersion  int             `json:"kind_version"`
	Scenario     string          `json:"scenario,omitempty"`
	Block        string          `json:"block,omitempty"`
	Member       string          `json:"member,omitempty"`
	Settings     json.RawMessage `json:"settings"`
	Sections     Digest          `json:"sections"`
	Inputs       []InputDigest   `json:"inputs"`
	Outputs      []OutputFile    `json:"outputs,omitempty"`
	OutputDigest Digest          `json:"output_digest"`
	Seconds      float64         `json:"seconds"`
	Finished     time.Time       `json:"finished"`
	Failed       bool            `json:"failed,omitempty"`
	Error        string          `json:"error,omitempty"`
}

// ManifestDigest digests the outputs by name and content; downstream keys
// use it, so identical outputs stop a rerun there (early cutoff).
func ManifestDigest(files []OutputFile) Digest {
	k := NewKey("outputs/v1")
	k.Int(int64(len(files)))
	for _, f := range files {
		k.String(f.Name).Int(f.Size).Digest(f.Digest)
	}
	return k.Sum()
}

// BuildManifest hashes and fsyncs every regular file below dir. It runs in
// the process that wrote the files (a child or a cluster job), so hashing
// happens in parallel with other instances.
func BuildManifest(dir string) ([]OutputFile, error) {
	var out []OutputFile
	err := filepath.WalkDir(dir, func(p string, d fs.DirEntry, err error) error {
		if err != nil {
			return err
		}
		if d.IsDir() {
			return nil
		}
		if !d.Type().IsRegular() {
			return fmt.Errorf("output %s is not a regular file", p)
		}
		f, err := os.Open(p)
		if err != nil {
			return err
		}
		defer f.Close()
		dg, n, err := HashReader(f)
		if err != nil {
			return err
		}
		if err := f.Sync(); err != nil {
			return fmt.Errorf("sync %s: %w", p, err)
		}
		rel, _ := filepath.Rel(dir, p)
		out = append(out, OutputFile{Name: filepath.ToSlash(rel), Size: n, Digest: dg})
		return nil
	})
	sort.Slice(out, func(i, j int) bool { return out[i].Name < out[j].Name })
	return out, err
}

// Commit makes the outputs in workDir the outputs of rec.Key (see
// CommitFiles) and records rec in one index transaction.
func (s *Store) Commit(workDir string, rec *Record) error {
	if err := CommitFiles(s.dir, workDir, rec); err != nil {
		return err
	}
	return s.put(rec)
}

// CommitFiles moves workDir into the object tree of the store in storeDir
// as the outputs of rec.Key, fills in their stat values and writes the
// receipt atomically. It never touches the index, so a cluster job may call
// it; the coordinator folds the receipt in later (Fold). rec.Outputs must
// describe workDir's files.
func CommitFiles(storeDir, workDir string, rec *Record) error {
	final := ObjectDirIn(storeDir, rec.Key)
	if err := os.MkdirAll(filepath.Dir(final), 0o755); err != nil {
		return err
	}
	if _, err := os.Stat(final); err == nil {
		// Left by a run that died between the rename and the index update,
		// or an altered copy: either way it is not trusted.
		trash, err := os.MkdirTemp(filepath.Join(storeDir, "tmp"), "stale-")
		if err != nil {
			return err
		}
		if err := os.Rename(final, filepath.Join(trash, "out")); err != nil {
			return err
		}
		os.RemoveAll(trash)
	}
	if err := os.Rename(workDir, final); err != nil {
		return fmt.Errorf("move outputs into the store: %w", err)
	}
	if err := syncDir(filepath.Dir(final)); err != nil {
		return err
	}
	for i := range rec.Outputs {
		fi, err := os.Stat(filepath.Join(final, filepath.FromSlash(rec.Outputs[i].Name)))
		if err != nil {
			return err
		}
		st := statOf(fi)
		rec.Outputs[i].MTime, rec.Outputs[i].Inode = st.MTime, st.Inode
	}
	b, err := json.MarshalIndent(rec, "", "  ")
	if err != nil {
		return err
	}
	if err := writeFileAtomic(ReceiptPathIn(storeDir, rec.Key), b); err != nil {
		return fmt.Errorf("write receipt: %w", err)
	}
	return nil
}

// Fold records a receipt written by a cluster job in the index.
func (s *Store) Fold(rec *Record) error { return s.put(rec) }

func (s *Store) put(rec *Record) error {
	v, err := json.Marshal(rec)
	if err != nil {
		return err
	}
	return s.update(func(tx *bolt.Tx) error {
		if !rec.Failed {
			if err := tx.Bucket(bucketInstances).Put([]byte(rec.Key.String()), v); err != nil {
				return err
			}
		}
		return tx.Bucket(bucketLatest).Put([]byte(rec.Instance), v)
	})
}

// RecordFailure notes a failed attempt so the next plan can say so.
func (s *Store) RecordFailure(rec *Record) error {
	rec.Failed = true
	return s.put(rec)
}

// Lookup returns the successful record for key, if any.
func (s *Store) Lookup(key Digest) (*Record, bool, error) {
	return s.get(bucketInstances, key.String())
}

// Latest returns the record of the last attempt of an instance identity.
func (s *Store) Latest(instance string) (*Record, bool, error) {
	return s.get(bucketLatest, instance)
}

func (s *Store) get(bucket []byte, k string) (*Record, bool, error) {
	var rec *Record
	err := s.view(func(tx *bolt.Tx) error {
		v := tx.Bucket(bucket).Get([]byte(k))
		if v == nil {
			return nil
		}
		rec = new(Record)
		return json.Unmarshal(v, rec) // copies out of the transaction
	})
	return rec, rec != nil, err
}

// Records lists every successful record in the index.
func (s *Store) Records() ([]*Record, error) {
	var out []*Record
	err := s.view(func(tx *bolt.Tx) error {
		return tx.Bucket(bucketInstances).ForEach(func(_, v []byte) error {
			r := new(Record)
			if err := json.Unmarshal(v, r); err != nil {
				return err
			}
			out = append(out, r)
			return nil
		})
	})
	return out, err
}

// Problem says why a recorded output cannot be trusted.
type Problem struct {
	File   string // path inside the object dir
	Reason string // "missing", "size changed", "content changed", ...
}

func (p Problem) String() string { return p.File + " " + p.Reason }

// CheckOutputs reports the first problem with a record's outputs. With
// deep false a file whose size, mtime and inode are as recorded is trusted
// without reading it; otherwise (or when they differ) it is re-hashed.
func (s *Store) CheckOutputs(rec *Record, deep bool) *Problem {
	return CheckOutputsIn(s.dir, rec, deep)
}

// CheckOutputsIn is CheckOutputs for the store in storeDir, without the
// index (for cluster jobs).
func CheckOutputsIn(storeDir string, rec *Record, deep bool) *Problem {
	dir := ObjectDirIn(storeDir, rec.Key)
	if _, err := os.Stat(dir); err != nil {
		return &Problem{File: ".", Reason: "output directory missing"}
	}
	for _, o := range rec.Outputs {
		p := filepath.Join(dir, filepath.FromSlash(o.Name))
		fi, err := os.Stat(p)
		if err != nil {
			return &Problem{File: o.Name, Reason: "missing"}
		}
		if fi.Size() != o.Size {
			return &Problem{File: o.Name, Reason: fmt.Sprintf("size changed (%d -> %d bytes)", o.Size, fi.Size())}
		}
		st := statOf(fi)
		if !deep && st.MTime == o.MTime && st.Inode == o.Inode {
			continue
		}
		d, _, err := HashFile(p)
		if err != nil {
			return &Problem{File: o.Name, Reason: "unreadable: " + err.Error()}
		}
		if d != o.Digest {
			return &Problem{File: o.Name, Reason: "content changed"}
		}
	}
	return nil
}

// Forget drops a key from the index (its outputs were found altered).
func (s *Store) Forget(key Digest) error {
	return s.update(func(tx *bolt.Tx) error {
		return tx.Bucket(bucketInstances).Delete([]byte(key.String()))
	})
}

// ReadReceipt reads a receipt file written by Commit or by a cluster job.
func ReadReceipt(path string) (*Record, error) {
	b, err := os.ReadFile(path)
	if err != nil {
		return nil, err
	}
	rec := new(Record)
	if err := json.Unmarshal(b, rec); err != nil {
		return nil, fmt.Errorf("receipt %s: %w", path, err)
	}
	return rec, nil
}

// Rebuild recreates index.db from the receipts beside the object
// directories, keeping only those whose outputs verify. The damaged index
// is moved aside (index.db.damaged) first. The store must not be open.
func Rebuild(dir string) (kept, dropped int, err error) {
	idx := filepath.Join(dir, "index.db")
	if _, err := os.Stat(idx); err == nil {
		if err := os.Rename(idx, idx+".damaged"); err != nil {
			return 0, 0, err
		}
	}
	s, err := Open(dir, Options{Command: "store rebuild", Rebuilding: true})
	if err != nil {
		return 0, 0, err
	}
	defer s.Close()
	receipts, _ := filepath.Glob(filepath.Join(dir, "objects", "*", "*.receipt.json"))
	sort.Strings(receipts)
	for _, p := range receipts {
		rec, err := ReadReceipt(p)
		if err != nil || s.CheckOutputs(rec, true) != nil {
			dropped++
			continue
		}
		if err := s.put(rec); err != nil {
			return kept, dropped, err
		}
		kept++
	}
	return kept, dropped, nil
}

// Prune deletes every object, receipt and index entry whose key is not in
// keep, plus stale work directories and logs. It returns what it freed.
func (s *Store) Prune(keep map[Digest]bool) (objects int, bytes int64, err error) {
	recs, err := s.Records()
	if err != nil {
		return 0, 0, err
	}
	for _, r := range recs {
		if keep[r.Key] {
			continue
		}
		for _, o := range r.Outputs {
			bytes += o.Size
		}
		if err := s.Forget(r.Key); err != nil {
			return objects, bytes, err
		}
		objects++
	}
	// Also sweep object directories the index does not know (a run killed
	// between rename and commit).
	dirs, _ := filepath.Glob(filepath.Join(s.dir, "objects", "*", "*"))
	for _, d := range dirs {
		name := filepath.Base(d)
		hex := name
		if len(name) > 64 {
			hex = name[:64]
		}
		k, perr := ParseDigest(hex)
		if perr == nil && keep[k] {
			continue
		}
		if err := os.RemoveAll(d); err != nil && !errors.Is(err, os.ErrNotExist) {
			return objects, bytes, err
		}
	}
	tmp, _ := filepath.Glob(filepath.Join(s.dir, "tmp", "*"))
	for _, t := range tmp {
		os.RemoveAll(t)
	}
	return objects, bytes, nil
}
