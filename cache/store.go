package cache

import (
	"encoding/json"
	"errors"
	"fmt"
	"os"
	"path/filepath"
	"strings"
	"syscall"
	"time"

	bolt "go.etcd.io/bbolt"
)

// LockWait is how long Open waits for another process to release the store.
const LockWait = 500 * time.Millisecond

// Store is an open campaign store. It is safe for use by one process; the
// runner's goroutines may share it (bbolt serialises writers).
type Store struct {
	dir string
	db  *bolt.DB
}

// Owner describes the process holding a store.
type Owner struct {
	PID     int       `json:"pid"`
	Host    string    `json:"host"`
	Command string    `json:"command"`
	Since   time.Time `json:"since"`
}

// LockedError says the store is held by another process.
type LockedError struct {
	Dir   string
	Owner *Owner // nil if the owner file could not be read
}

func (e *LockedError) Error() string {
	if e.Owner == nil {
		return fmt.Sprintf("store %s is in use by another squall process", e.Dir)
	}
	return fmt.Sprintf("store %s is in use by process %d on %s (%s), running since %s",
		e.Dir, e.Owner.PID, e.Owner.Host, e.Owner.Command, e.Owner.Since.Format(time.RFC3339))
}

// CorruptError says the index cannot be read.
type CorruptError struct {
	Path string
	Err  error
}

func (e *CorruptError) Error() string {
	return fmt.Sprintf("the store index %s is damaged (%v); rebuild it from the receipts with `squall store rebuild`", e.Path, e.Err)
}

func (e *CorruptError) Unwrap() error { return e.Err }

// Options for Open.
type Options struct {
	ReadOnly bool
	Command  string // recorded in owner.json for whoever is refused
	// Rebuilding opens a store whose index is being recreated.
	Rebuilding bool
}

// Open opens (creating if needed) the store in dir and takes its lock.
func Open(dir string, opt Options) (*Store, error) {
	for _, sub := range []string{"objects", "tmp", "logs", "runs"} {
		if err := os.MkdirAll(filepath.Join(dir, sub), 0o755); err != nil {
			return nil, fmt.Errorf("create store: %w", err)
		}
	}
	path := filepath.Join(dir, "index.db")
	if fi, err := os.Stat(path); (err != nil || fi.Size() == 0) && !opt.Rebuilding {
		// An index that vanished (or was emptied) beside stored outputs
		// would silently become a new, empty store and recompute everything.
		if rs, _ := filepath.Glob(filepath.Join(dir, "objects", "*", "*.receipt.json")); len(rs) > 0 {
			return nil, &CorruptError{Path: path, Err: fmt.Errorf("the index is missing or empty but %d stored outputs have receipts", len(rs))}
		}
	}
	db, err := openIndex(path, opt.ReadOnly)
	if err != nil {
		if errors.Is(err, bolt.ErrTimeout) {
			return nil, &LockedError{Dir: dir, Owner: readOwner(dir)}
		}
		return nil, err
	}
	s := &Store{dir: dir, db: db}
	if !opt.ReadOnly {
		if err := s.init(); err != nil {
			db.Close()
			return nil, &CorruptError{Path: path, Err: err}
		}
		host, _ := os.Hostname()
		o := Owner{PID: os.Getpid(), Host: host, Command: opt.Command, Since: time.Now().UTC()}
		b, _ := json.Marshal(o)
		if err := writeFileAtomic(filepath.Join(dir, "owner.json"), b); err != nil {
			db.Close()
			return nil, err
		}
		s.sweepTmp()
	}
	return s, nil
}

func openIndex(path string, readOnly bool) (db *bolt.DB, err error) {
	if err := precheckIndex(path); err != nil {
		return nil, &CorruptError{Path: path, Err: err}
	}
	// bbolt panics on some damaged files instead of returning an error;
	// a damaged index must reach the user as a sentence, not a stack trace.
	defer func() {
		if r := recover(); r != nil {
			db, err = nil, &CorruptError{Path: path, Err: fmt.Errorf("%v", r)}
		}
	}()
	db, err = bolt.Open(path, 0o644, &bolt.Options{Timeout: LockWait, ReadOnly: readOnly})
	if err != nil && !errors.Is(err, bolt.ErrTimeout) {
		return nil, &CorruptError{Path: path, Err: err}
	}
	return db, err
}

func readOwner(dir string) *Owner {
	b, err := os.ReadFile(filepath.Join(dir, "owner.json"))
	if err != nil {
		return nil
	}
	var o Owner
	if json.Unmarshal(b, &o) != nil {
		return nil
	}
	return &o
}

// Dir is the store directory.
func (s *Store) Dir() string { return s.dir }

// Close releases the store.
func (s *Store) Close() error {
	if !s.db.IsReadOnly() {
		os.Remove(filepath.Join(s.dir, "owner.json"))
	}
	return s.db.Close()
}

// ObjectDir is where the outputs of the instance with this key live.
func (s *Store) ObjectDir(key Digest) string { return ObjectDirIn(s.dir, key) }

// ObjectDirIn is ObjectDir for the store in storeDir.
func ObjectDirIn(storeDir string, key Digest) string {
	h := key.String()
	return filepath.Join(storeDir, "objects", h[:2], h)
}

// ReceiptPathIn is where the receipt of key's outputs lives.
func ReceiptPathIn(storeDir string, key Digest) string {
	return ObjectDirIn(storeDir, key) + ".receipt.json"
}

// LogPath is where the error output of an instance attempt is kept.
func (s *Store) LogPath(key Digest) string {
	return filepath.Join(s.dir, "logs", key.String()+".log")
}

// TempDir makes a fresh work directory for one instance attempt.
func (s *Store) TempDir(prefix string) (string, error) {
	return os.MkdirTemp(filepath.Join(s.dir, "tmp"), prefix+"-")
}

// fileStat is what the memo compares to decide a file is unchanged.
type fileStat struct {
	Size  int64  `json:"size"`
	MTime int64  `json:"mtime_ns"`
	Inode uint64 `json:"inode"`
}

func statOf(fi os.FileInfo) fileStat {
	st := fileStat{Size: fi.Size(), MTime: fi.ModTime().UnixNano()}
	if sys, ok := fi.Sys().(*syscall.Stat_t); ok {
		st.Inode = sys.Ino
	}
	return st
}

func writeFileAtomic(path string, data []byte) error {
	tmp := path + ".tmp"
	f, err := os.Create(tmp)
	if err != nil {
		return err
	}
	if _, err := f.Write(data); err != nil {
		f.Close()
		return err
	}
	if err := f.Sync(); err != nil {
		f.Close()
		return err
	}
	if err := f.Close(); err != nil {
		return err
	}
	if err := os.Rename(tmp, path); err != nil {
		return err
	}
	return syncDir(filepath.Dir(path))
}

func syncDir(dir string) error {
	d, err := os.Open(dir)
	if err != nil {
		return err
	}
	defer d.Close()
	return d.Sync()
}

// RelPath returns p relative to the store, for messages.
func (s *Store) RelPath(p string) string {
	if r, err := filepath.Rel(s.dir, p); err == nil && !strings.HasPrefix(r, "..") {
		return r
	}
	return p
}

// view and update run index transactions. bbolt panics on some damaged
// pages instead of returning an error; a damaged index must reach the
// user as a sentence and exit code 5, not a stack trace.
func (s *Store) view(fn func(*bolt.Tx) error) (err error) {
	defer s.recoverCorrupt(&err)
	return s.db.View(fn)
}

func (s *Store) update(fn func(*bolt.Tx) error) (err error) {
	defer s.recoverCorrupt(&err)
	return s.db.Update(fn)
}

func (s *Store) recoverCorrupt(err *error) {
	if r := recover(); r != nil {
		*err = &CorruptError{Path: filepath.Join(s.dir, "index.db"), Err: fmt.Errorf("%v", r)}
	}
}

// sweepTmp removes work directories left by runs that died (kill -9, a
// power cut): nobody else can be using them, since this process holds the
// store. Cluster jobs' directories (job-*) are left alone: a job of a
// coordinator that died may still be running on the cluster.
func (s *Store) sweepTmp() {
	ents, _ := os.ReadDir(filepath.Join(s.dir, "tmp"))
	for _, e := range ents {
		if !strings.HasPrefix(e.Name(), "job-") {
			os.RemoveAll(filepath.Join(s.dir, "tmp", e.Name()))
		}
	}
}
