package main

// Damage to the store behind squall's back, through the command line:
// recorded outputs altered or deleted (found by `squall store check` and
// by the next run, and recomputed), and the bbolt index truncated, its
// header overwritten, emptied or deleted (refused with exit code 5 and a
// pointer to `squall store rebuild`, which recovers every instance from
// the receipts).

import (
	"os"
	"path/filepath"
	"strings"
	"testing"

	"github.com/squall-climate/squall/pipeline"
)

// relStoreFixture runs the subset kind over three years and returns the
// campaign file and the output digests per instance.
func relStoreFixture(t *testing.T) (string, map[string]string) {
	t.Helper()
	dir := t.TempDir()
	for _, y := range []string{"1990", "1991", "1992"} {
		relNcgen(t, filepath.Join(dir, "data", "fields_"+y+".nc"), "nc4", relEdit(t, relCDL, "days since 1991", "days since "+y))
	}
	f := filepath.Join(dir, "c.yaml")
	os.WriteFile(f, []byte(strings.Replace(relCampaign, "period: 1991", "period: 1990-1992", 1)), 0o644)
	if code, out, errs := relSquall(t, "run", "--report", "-", f); code != exitOK {
		t.Fatalf("first run: exit %d\n%s%s", code, out, errs)
	}
	return f, relDigests(t, f)
}

func relDigests(t *testing.T, f string) map[string]string {
	t.Helper()
	rec, err := pipeline.LastRunRecord(filepath.Join(filepath.Dir(f), ".squall"))
	if err != nil {
		t.Fatal(err)
	}
	m := map[string]string{}
	for _, in := range rec.Instances {
		m[in.Label] = in.OutputDigest
	}
	return m
}

func relSameDigests(t *testing.T, got, want map[string]string) {
	t.Helper()
	for l, d := range want {
		if got[l] != d {
			t.Errorf("%s: digest %s, was %s before the damage", l, got[l], d)
		}
	}
}

func TestFaultsAlteredOutputsFoundAndRecomputed(t *testing.T) {
	f, want := relStoreFixture(t)
	store := filepath.Join(filepath.Dir(f), ".squall")
	outs, _ := filepath.Glob(filepath.Join(store, "objects", "*", "*", "fields.nc"))
	if len(outs) != 3 {
		t.Fatalf("outputs %v", outs)
	}
	// Same size, one byte flipped; and one output deleted.
	b, _ := os.ReadFile(outs[0])
	b[len(b)/2] ^= 0xff
	os.WriteFile(outs[0], b, 0o644)
	os.Remove(outs[1])
	code, out, errs := relSquall(t, "store", "check", f)
	if code != exitError || !strings.Contains(out, "fields.nc content changed") || !strings.Contains(out, "fields.nc missing") ||
		!strings.Contains(out, "3 recorded instance outputs checked, 2 altered or missing") || !strings.Contains(errs, "found 2 damaged") {
		t.Fatalf("store check: exit %d\n%s%s", code, out, errs)
	}
	code, out, errs = relSquall(t, "run", "--report", "-", f)
	if code != exitOK || !strings.Contains(out, "2 ran, 1 reused") {
		t.Fatalf("run after the damage: exit %d\n%s%s", code, out, errs)
	}
	relSameDigests(t, relDigests(t, f), want)
	// Altered without telling squall, and found by the run itself (no
	// store check in between): the plan says why it reruns.
	outs, _ = filepath.Glob(filepath.Join(store, "objects", "*", "*", "fields.nc"))
	os.WriteFile(outs[2], []byte("not what was written"), 0o644)
	code, out, _ = relSquall(t, "plan", f)
	if code != exitOK || !strings.Contains(out, "output fields.nc size changed") || !strings.Contains(out, "1 to run, 2 to reuse") {
		t.Fatalf("plan after a silent change: exit %d\n%s", code, out)
	}
	if code, out, errs := relSquall(t, "run", "--report", "-", f); code != exitOK || !strings.Contains(out, "1 ran, 2 reused") {
		t.Fatalf("run after a silent change: exit %d\n%s%s", code, out, errs)
	}
	relSameDigests(t, relDigests(t, f), want)
}

func TestFaultsDamagedIndexRefusedAndRebuilt(t *testing.T) {
	f, want := relStoreFixture(t)
	store := filepath.Join(filepath.Dir(f), ".squall")
	index := filepath.Join(store, "index.db")
	good, err := os.ReadFile(index)
	if err != nil {
		t.Fatal(err)
	}
	damage := []struct {
		name  string
		apply func()
		// refused: plan and run exit 5 naming the index and the rebuild
		// command; otherwise the damage reads as an empty store.
		refused bool
	}{
		{"truncated", func() { os.WriteFile(index, good[:5000], 0o644) }, true},
		{"header overwritten", func() {
			b := append([]byte(nil), good...)
			copy(b, make([]byte, 8192))
			os.WriteFile(index, b, 0o644)
		}, true},
		// An empty or missing index beside stored receipts is refused too
		// (it would otherwise read as a new store and recompute
		// everything); the rebuild recovers every instance.
		{"emptied", func() { os.WriteFile(index, nil, 0o644) }, true},
		{"deleted", func() { os.Remove(index) }, true},
	}
	for _, d := range damage {
		t.Run(d.name, func(t *testing.T) {
			os.WriteFile(index, good, 0o644)
			os.RemoveAll(index + ".damaged")
			d.apply()
			objects := relSnapshot(t, filepath.Join(store, "objects"))
			if d.refused {
				for _, args := range [][]string{{"plan", f}, {"run", "--report", "-", f}, {"store", "check", f}} {
					code, out, errs := relSquall(t, args...)
					if code != exitDamaged || !strings.Contains(errs, index) || !strings.Contains(errs, "is damaged") || !strings.Contains(errs, "squall store rebuild") {
						t.Errorf("%s with a %s index: exit %d, want %d naming the index and the rebuild\n%s%s", args[0], d.name, code, exitDamaged, out, errs)
					}
				}
				if a, r, c := relDiff(objects, relSnapshot(t, filepath.Join(store, "objects"))); len(a)+len(r)+len(c) > 0 {
					t.Errorf("a refused run touched the outputs: %v %v %v", a, r, c)
				}
			} else {
				code, out, _ := relSquall(t, "plan", f)
				if code != exitOK || !strings.Contains(out, "3 to run, 0 to reuse") {
					t.Errorf("plan with a %s index: exit %d\n%s", d.name, code, out)
				}
			}
			code, out, errs := relSquall(t, "store", "rebuild", f)
			if code != exitOK || !strings.Contains(out, "3 instances recovered from receipts, 0 receipts dropped") {
				t.Fatalf("store rebuild: exit %d\n%s%s", code, out, errs)
			}
			code, out, _ = relSquall(t, "plan", f)
			if code != exitOK || !strings.Contains(out, "0 to run, 3 to reuse") {
				t.Fatalf("plan after the rebuild: exit %d\n%s", code, out)
			}
			if code, out, errs := relSquall(t, "run", "--report", "-", f); code != exitOK || !strings.Contains(out, "0 ran, 3 reused") {
				t.Fatalf("run after the rebuild: exit %d\n%s%s", code, out, errs)
			}
			relSameDigests(t, relDigests(t, f), want)
		})
	}
}
