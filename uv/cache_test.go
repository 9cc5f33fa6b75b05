package uv

import (
	"errors"
	"math/rand/v2"
	"os"
	"path/filepath"
	"testing"
)

func openTable(name string) (ChunkReader, error) { return OpenTable(name, ReadOptions{}) }

// The cache returns the same products it stored (χ² equal to the last bit),
// is rebuilt when the data change or the file is truncated or altered, and
// is never trusted under another key.
func TestCompressCached(t *testing.T) {
	rnd := rand.New(rand.NewPCG(1, 7))
	dir := t.TempDir()
	g := Grid{N: 16, Pixel: 0.3, X0: 0.1}
	d := simDataset(rnd, 200, g, 300e9)
	d.Freqs = []float64{300e9, 303e9}
	d.FreqIndex = make([]uint32, d.Len())
	for k := range d.FreqIndex {
		d.FreqIndex[k] = uint32(k % 2)
	}
	name := filepath.Join(dir, "obs.csv")
	if err := WriteTableFile(name, false, d); err != nil {
		t.Fatal(err)
	}
	cdir := filepath.Join(dir, "cache")
	opt := CompressOptions{}
	first, st, err := CompressCached(cdir, name, g, opt, "", openTable)
	if err != nil {
		t.Fatal(err)
	}
	if st != CacheMiss || len(first) != 2 {
		t.Fatalf("first call: status %v, %d groups; want miss, 2", st, len(first))
	}
	img := supportImage(rnd, g, 2, 10, 3, 12)
	again, st, err := CompressCached(cdir, name, g, opt, "", openTable)
	if err != nil || st != CacheHit {
		t.Fatalf("second call: status %v, err %v; want a hit", st, err)
	}
	for i := range first {
		if a, b := first[i].Chi2(img), again[i].Chi2(img); a != b {
			t.Errorf("group %d: χ² from cache %v, computed %v", i, b, a)
		}
		if first[i].Freq() != again[i].Freq() || first[i].Count() != again[i].Count() ||
			first[i].LogNorm() != again[i].LogNorm() || first[i].Label() != again[i].Label() ||
			first[i].PrimaryBeam() != again[i].PrimaryBeam() || first[i].Grid() != again[i].Grid() {
			t.Errorf("group %d: scalars differ after the cache round trip", i)
		}
	}
	path := CachePath(cdir, name, g)
	key, _ := CacheKey([]string{name}, g, opt, "")
	if _, err := ReadCache(path, key+"x"); !errors.Is(err, ErrCacheStale) {
		t.Errorf("other key: %v, want ErrCacheStale", err)
	}
	// Other options change the key.
	if _, st, err := CompressCached(cdir, name, g, CompressOptions{NoPrimaryBeam: true}, "", openTable); err != nil || st != CacheRebuilt {
		t.Errorf("new options: status %v err %v, want rebuilt", st, err)
	}
	// Altered data: the key changes, the cache is stale and rebuilt.
	d.Re[3] += 1
	if err := WriteTableFile(name, true, d); err != nil {
		t.Fatal(err)
	}
	fresh, st, err := CompressCached(cdir, name, g, opt, "", openTable)
	if err != nil || st != CacheRebuilt {
		t.Fatalf("changed data: status %v err %v, want rebuilt", st, err)
	}
	if fresh[0].DataTerm() == first[0].DataTerm() && fresh[1].DataTerm() == first[1].DataTerm() {
		t.Error("rebuilt products equal the stale ones")
	}
	key, _ = CacheKey([]string{name}, g, opt, "")
	raw, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	for _, tc := range []struct {
		name string
		data []byte
	}{
		{"truncated", raw[:len(raw)/2]},
		{"flipped byte", func() []byte {
			b := append([]byte(nil), raw...)
			b[len(b)-2880+5] ^= 0x40 // inside the last data block (the gain)
			return b
		}()},
		{"garbage", []byte("SIMPLE  = not really a FITS file")},
	} {
		t.Run(tc.name, func(t *testing.T) {
			if err := os.WriteFile(path, tc.data, 0o644); err != nil {
				t.Fatal(err)
			}
			if _, err := ReadCache(path, key); !errors.Is(err, ErrCacheCorrupt) {
				t.Errorf("ReadCache: %v, want ErrCacheCorrupt", err)
			}
			cs, st, err := CompressCached(cdir, name, g, opt, "", openTable)
			if err != nil || st != CacheRebuilt {
				t.Fatalf("status %v err %v, want rebuilt", st, err)
			}
			if cs[0].Chi2(img) != fresh[0].Chi2(img) {
				t.Error("rebuilt products differ from a fresh compression")
			}
		})
	}
}

// CompressFile with and without a cache gives the same products, and other
// read options are another key.
func TestCompressFile(t *testing.T) {
	rnd := rand.New(rand.NewPCG(1, 9))
	dir := t.TempDir()
	g := Grid{N: 16, Pixel: 0.3}
	d := simDataset(rnd, 150, g, 300e9)
	name := filepath.Join(dir, "obs.csv")
	if err := WriteTableFile(name, false, d); err != nil {
		t.Fatal(err)
	}
	plain, st, err := CompressFile("", name, g, CompressOptions{}, ReadOptions{})
	if err != nil || st != CacheMiss {
		t.Fatalf("no cache: %v %v", st, err)
	}
	cdir := filepath.Join(dir, "c")
	cached, st, err := CompressFile(cdir, name, g, CompressOptions{}, ReadOptions{})
	if err != nil || st != CacheMiss {
		t.Fatalf("first cached: %v %v", st, err)
	}
	if _, st, _ := CompressFile(cdir, name, g, CompressOptions{}, ReadOptions{}); st != CacheHit {
		t.Errorf("second cached: %v, want hit", st)
	}
	if _, st, _ := CompressFile(cdir, name, g, CompressOptions{}, ReadOptions{Meta: Meta{Dish: 7}}); st != CacheRebuilt {
		t.Errorf("other read options: %v, want rebuilt", st)
	}
	img := supportImage(rnd, g, 3, 9, 2, 12)
	if a, b := plain[0].Chi2(img), cached[0].Chi2(img); a != b {
		t.Errorf("χ² %v without cache, %v with", a, b)
	}
}
