package ncio

import (
	"path/filepath"
	"sync"
	"testing"
)

// Concurrent use is not the intended way (see the package doc), but the
// package-wide lock must keep it correct rather than corrupt the library.
// Without the lock it failed in some trial runs only: it guards against
// regressions, it does not prove thread safety.
func TestConcurrentUseIsSerialised(t *testing.T) {
	dir := t.TempDir()
	src := filepath.Join(dir, "src.nc")
	spec := RawSpec{NT: 8, NY: 20, NX: 30}
	if _, _, err := RawWriteFloat32(src, spec); err != nil {
		t.Fatal(err)
	}
	want := make([]float32, spec.NY*spec.NX)
	rawField(want, 5%8, spec.NY, spec.NX)
	var wg sync.WaitGroup
	errs := make(chan error, 8)
	for g := 0; g < 4; g++ {
		wg.Add(2)
		go func() { // readers
			defer wg.Done()
			for i := 0; i < 30; i++ {
				f, err := Open(src)
				if err != nil {
					errs <- err
					return
				}
				v, _ := f.Var("field")
				got, err := v.ReadFloat32([]int{5, 0, 0}, []int{1, spec.NY, spec.NX})
				f.Close()
				if err != nil {
					errs <- err
					return
				}
				for j := range got {
					if got[j] != want[j] {
						t.Errorf("value %d: %v, want %v", j, got[j], want[j])
						return
					}
				}
			}
		}()
		go func(g int) { // writers
			defer wg.Done()
			for i := 0; i < 3; i++ {
				if _, _, err := RawWriteFloat32(filepath.Join(dir, "w"+string(rune('a'+g))+".nc"), spec); err != nil {
					errs <- err
					return
				}
			}
		}(g)
	}
	wg.Wait()
	close(errs)
	for err := range errs {
		t.Error(err)
	}
}
