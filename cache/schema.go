package cache

import (
	"fmt"

	bolt "go.etcd.io/bbolt"
)

// SchemaVersion is the layout of index.db. A store written by another
// version is refused rather than misread.
const SchemaVersion = "1"

// Buckets of index.db, all in one place.
var (
	bucketMeta      = []byte("meta")      // "schema" -> SchemaVersion
	bucketFiles     = []byte("files")     // absolute path -> fileMemo (JSON)
	bucketInstances = []byte("instances") // key hex -> Record (JSON)
	bucketLatest    = []byte("latest")    // instance id -> Record of its last attempt (JSON)
)

func (s *Store) init() error {
	return s.update(func(tx *bolt.Tx) error {
		for _, b := range [][]byte{bucketMeta, bucketFiles, bucketInstances, bucketLatest} {
			if _, err := tx.CreateBucketIfNotExists(b); err != nil {
				return err
			}
		}
		meta := tx.Bucket(bucketMeta)
		v := meta.Get([]byte("schema"))
		if v == nil {
			return meta.Put([]byte("schema"), []byte(SchemaVersion))
		}
		if string(v) != SchemaVersion {
			return fmt.Errorf("index schema %s, this squall reads schema %s", v, SchemaVersion)
		}
		return nil
	})
}
