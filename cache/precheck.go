package cache

import (
	"encoding/binary"
	"fmt"
	"hash/fnv"
	"os"
)

// bbolt memory-maps the index; a file cut short makes the first read past
// its end a SIGBUS that no recover() can catch. precheckIndex reads the
// two meta pages the way bbolt lays them out (page header 16 bytes, then
// magic, version, page size, flags, root bucket, freelist page, high-water
// page id, txid, FNV-64a checksum) and refuses a file shorter than the
// pages its newest valid meta page claims.
const boltMagic = 0xED0CDAED

func precheckIndex(path string) error {
	f, err := os.Open(path)
	if os.IsNotExist(err) {
		return nil
	}
	if err != nil {
		return err
	}
	defer f.Close()
	fi, err := f.Stat()
	if err != nil {
		return err
	}
	if fi.Size() == 0 {
		return nil // bbolt initialises an empty file
	}
	hdr := make([]byte, 80)
	if _, err := f.ReadAt(hdr, 0); err != nil {
		return fmt.Errorf("index shorter than its header (%d bytes)", fi.Size())
	}
	pageSize := int64(binary.LittleEndian.Uint32(hdr[24:28]))
	if binary.LittleEndian.Uint32(hdr[16:20]) != boltMagic || pageSize < 512 || pageSize > 1<<20 {
		return fmt.Errorf("not a squall index (bad header)")
	}
	var best struct{ txid, pgid uint64 }
	valid := 0
	for i := int64(0); i < 2; i++ {
		m := make([]byte, 80)
		if _, err := f.ReadAt(m, i*pageSize); err != nil {
			continue
		}
		if binary.LittleEndian.Uint32(m[16:20]) != boltMagic {
			continue
		}
		h := fnv.New64a()
		h.Write(m[16:72])
		if h.Sum64() != binary.LittleEndian.Uint64(m[72:80]) {
			continue
		}
		valid++
		txid, pgid := binary.LittleEndian.Uint64(m[64:72]), binary.LittleEndian.Uint64(m[56:64])
		if txid >= best.txid {
			best.txid, best.pgid = txid, pgid
		}
	}
	if valid == 0 {
		return fmt.Errorf("both meta pages are damaged")
	}
	if need := int64(best.pgid) * pageSize; fi.Size() < need {
		return fmt.Errorf("index is truncated: %d bytes, its pages need %d", fi.Size(), need)
	}
	return nil
}
