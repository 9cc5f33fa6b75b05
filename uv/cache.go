package uv

import (
	"crypto/sha256"
	"encoding/binary"
	"encoding/hex"
	"errors"
	"fmt"
	"io"
	"io/fs"
	"math"
	"os"
	"path/filepath"
	"strings"

	"github.com/astrogo/fitsio"

	"deflect/internal/atomicfile"
)

// cacheVersion changes whenever the cache layout or the meaning of its
// contents changes; it is part of every key.
const cacheVersion = "deflect-uv-compressed-1"

// ErrCacheStale is returned, wrapped, by ReadCache when the cache file was
// made from other data, another grid or other options.
var ErrCacheStale = errors.New("compressed-data cache is stale")

// ErrCacheCorrupt is returned, wrapped, by ReadCache when the cache file
// cannot be read back intact.
var ErrCacheCorrupt = errors.New("compressed-data cache is corrupt")

// CacheKey returns the hexadecimal SHA-256 key of the compressed products of
// the data files: a hash of the files' contents, the grid, the compression
// options and extra, a caller's description of anything else that changes
// the data (read options, metadata overrides).
func CacheKey(files []string, g Grid, opt CompressOptions, extra string) (string, error) {
	h := sha256.New()
	fmt.Fprintf(h, "%s\n", cacheVersion)
	for _, name := range files {
		f, err := os.Open(name)
		if err != nil {
			return "", err
		}
		fh := sha256.New()
		_, err = io.Copy(fh, f)
		f.Close()
		if err != nil {
			return "", fmt.Errorf("%s: %w", name, err)
		}
		fmt.Fprintf(h, "file %x\n", fh.Sum(nil))
	}
	fmt.Fprintf(h, "grid %v %v %v %v\n", g.N, math.Float64bits(g.Pixel), math.Float64bits(g.X0), math.Float64bits(g.Y0))
	fmt.Fprintf(h, "opt %v %v %v %v %v\n", math.Float64bits(opt.Tol), opt.Exact,
		math.Float64bits(opt.MaxFracBandwidth), math.Float64bits(opt.Dish), opt.NoPrimaryBeam)
	fmt.Fprintf(h, "extra %q\n", extra)
	return hex.EncodeToString(h.Sum(nil)), nil
}

// CacheStatus says where CompressCached's products came from.
type CacheStatus int

const (
	// CacheHit means the products were read from a valid cache file.
	CacheHit CacheStatus = iota
	// CacheMiss means there was no cache file; the products were computed
	// and stored.
	CacheMiss
	// CacheRebuilt means the cache file was stale or corrupt; the products
	// were computed and the file replaced.
	CacheRebuilt
)

// String returns "hit", "miss" or "rebuilt".
func (s CacheStatus) String() string {
	switch s {
	case CacheHit:
		return "hit"
	case CacheMiss:
		return "miss"
	case CacheRebuilt:
		return "rebuilt"
	}
	return fmt.Sprintf("CacheStatus(%d)", int(s))
}

// CachePath returns the cache file in dir for the data file name on grid g:
// its base name and a short hash of its absolute path and the grid, so that
// every (file, grid) pair has one file, checked against its full key on
// every read.
func CachePath(dir, name string, g Grid) string {
	abs, err := filepath.Abs(name)
	if err != nil {
		abs = name
	}
	s := sha256.Sum256(fmt.Appendf(nil, "%s %v %v %v %v", abs, g.N, g.Pixel, g.X0, g.Y0))
	return filepath.Join(dir, fmt.Sprintf("%s.%x.uvc.fits", filepath.Base(name), s[:6]))
}

// CompressCached returns the compressed products of the data file name on
// g: from its cache file in dir when that holds the products of the same
// file contents, grid, options and extra; otherwise computed from the
// chunks of open(name) and written to the cache (atomically, replacing a
// stale or corrupt file). A cache is never trusted without its key and
// checksums matching.
func CompressCached(dir, name string, g Grid, opt CompressOptions, extra string,
	open func(name string) (ChunkReader, error)) ([]*Compressed, CacheStatus, error) {
	key, err := CacheKey([]string{name}, g, opt, extra)
	if err != nil {
		return nil, 0, err
	}
	path := CachePath(dir, name, g)
	cs, err := ReadCache(path, key)
	if err == nil {
		return cs, CacheHit, nil
	}
	status := CacheRebuilt
	if errors.Is(err, fs.ErrNotExist) {
		status = CacheMiss
	} else if !errors.Is(err, ErrCacheStale) && !errors.Is(err, ErrCacheCorrupt) {
		return nil, 0, err
	}
	r, err := open(name)
	if err != nil {
		return nil, 0, err
	}
	if c, ok := r.(io.Closer); ok {
		defer c.Close()
	}
	cs, err = CompressStream(r, g, opt)
	if err != nil {
		return nil, 0, fmt.Errorf("%s: %w", name, err)
	}
	if err := os.MkdirAll(dir, 0o755); err != nil {
		return nil, 0, err
	}
	if err := WriteCache(path, key, cs); err != nil {
		return nil, 0, err
	}
	return cs, status, nil
}

// groupSum returns the SHA-256 of a group's arrays and scalars, the
// checksum a cache file carries for each group.
func groupSum(c *Compressed) string {
	h := sha256.New()
	var b [8]byte
	put := func(v float64) {
		binary.LittleEndian.PutUint64(b[:], math.Float64bits(v))
		h.Write(b[:])
	}
	for _, a := range [][]float64{c.dirty, c.beam, c.gain} {
		for _, v := range a {
			put(v)
		}
	}
	for _, v := range []float64{c.freq, c.fmin, c.fmax, c.pb.FWHM, float64(c.count), c.sumW, c.dataTerm, c.logNorm} {
		put(v)
	}
	h.Write([]byte(c.label))
	return hex.EncodeToString(h.Sum(nil))
}

// WriteCache writes the compressed products cs (one dataset's groups, all on
// one grid) to the FITS file path under key, atomically, replacing any
// existing file. Each group is three image HDUs: the dirty image D (N×N),
// the beam B ((2N−1)²) and the gain A (N×N); the first carries the group's
// scalars and a SHA-256 checksum of everything.
func WriteCache(path, key string, cs []*Compressed) error {
	if len(cs) == 0 {
		panic("uv: WriteCache with no groups")
	}
	g := cs[0].grid
	var hdus []fitsHDU
	for i, c := range cs {
		if c.grid != g {
			panic("uv: WriteCache with groups on different grids")
		}
		n := g.N
		cards := []fitsio.Card{
			{Name: "EXTNAME", Value: fmt.Sprintf("DIRTY%d", i)},
			{Name: "CACHEKEY", Value: key},
			{Name: "NGROUPS", Value: len(cs)},
			{Name: "GROUP", Value: i},
			{Name: "GRIDN", Value: n},
			{Name: "PIXEL", Value: g.Pixel},
			{Name: "X0", Value: g.X0},
			{Name: "Y0", Value: g.Y0},
			{Name: "LABEL", Value: c.label},
			{Name: "FREQ", Value: c.freq},
			{Name: "FREQMIN", Value: c.fmin},
			{Name: "FREQMAX", Value: c.fmax},
			{Name: "PBFWHM", Value: c.pb.FWHM},
			{Name: "COUNT", Value: c.count},
			{Name: "SUMW", Value: c.sumW},
			{Name: "DATATERM", Value: c.dataTerm},
			{Name: "LOGNORM", Value: c.logNorm},
			{Name: "DSUM", Value: groupSum(c)},
		}
		hdus = append(hdus,
			fitsHDU{axes: []int{n, n}, cards: cards, data: c.dirty},
			fitsHDU{axes: []int{2*n - 1, 2*n - 1}, cards: []fitsio.Card{{Name: "EXTNAME", Value: fmt.Sprintf("BEAM%d", i)}}, data: c.beam},
			fitsHDU{axes: []int{n, n}, cards: []fitsio.Card{{Name: "EXTNAME", Value: fmt.Sprintf("GAIN%d", i)}}, data: c.gain},
		)
	}
	return atomicfile.Write(path, true, func(w io.Writer) error { return writeFITS(w, hdus) })
}

// ReadCache reads the compressed products stored in path under key. It
// returns an error wrapping fs.ErrNotExist when there is no file,
// ErrCacheStale when the file holds another key, and ErrCacheCorrupt when
// it cannot be read back intact (truncated, malformed, checksum mismatch).
func ReadCache(path, key string) (cs []*Compressed, err error) {
	f, err := os.Open(path)
	if err != nil {
		return nil, err
	}
	defer f.Close()
	corrupt := func(format string, a ...any) error {
		return fmt.Errorf("%s: %w: %s", path, ErrCacheCorrupt, fmt.Sprintf(format, a...))
	}
	defer func() {
		// fitsio panics on some malformed input; a cache must never crash a fit.
		if r := recover(); r != nil {
			cs, err = nil, corrupt("%v", r)
		}
	}()
	ff, err := fitsio.Open(f)
	if err != nil {
		return nil, corrupt("%v", err)
	}
	defer ff.Close()
	hdus := ff.HDUs()
	if len(hdus) == 0 || len(hdus)%3 != 0 {
		return nil, corrupt("%d HDUs, want three per group", len(hdus))
	}
	for gi := 0; gi < len(hdus)/3; gi++ {
		h := hdus[3*gi].Header()
		get := func(name string) any {
			if c := h.Get(name); c != nil {
				return c.Value
			}
			return nil
		}
		k, _ := get("CACHEKEY").(string)
		if strings.TrimSpace(k) != key {
			return nil, fmt.Errorf("%s: %w (key %.12s…, want %.12s…)", path, ErrCacheStale, k, key)
		}
		num := func(name string) (float64, error) {
			switch v := get(name).(type) {
			case float64:
				return v, nil
			case int:
				return float64(v), nil
			}
			return 0, corrupt("group %d: card %s missing or not a number", gi, name)
		}
		var vals [12]float64
		for i, name := range []string{"NGROUPS", "GRIDN", "PIXEL", "X0", "Y0", "FREQ", "FREQMIN", "FREQMAX", "PBFWHM", "COUNT", "SUMW", "DATATERM"} {
			if vals[i], err = num(name); err != nil {
				return nil, err
			}
		}
		logNorm, err := num("LOGNORM")
		if err != nil {
			return nil, err
		}
		if int(vals[0]) != len(hdus)/3 {
			return nil, corrupt("NGROUPS %v, file has %d groups", vals[0], len(hdus)/3)
		}
		n := int(vals[1])
		label, _ := get("LABEL").(string)
		sum, _ := get("DSUM").(string)
		c := &Compressed{grid: Grid{N: n, Pixel: vals[2], X0: vals[3], Y0: vals[4]}, label: strings.TrimSpace(label),
			freq: vals[5], fmin: vals[6], fmax: vals[7], pb: PrimaryBeam{FWHM: vals[8]}, count: int(vals[9]),
			sumW: vals[10], dataTerm: vals[11], logNorm: logNorm}
		want := [][2]int{{n, n}, {2*n - 1, 2*n - 1}, {n, n}}
		var arrays [3][]float64
		for p := range 3 {
			img, ok := hdus[3*gi+p].(fitsio.Image)
			axes := hdus[3*gi+p].Header().Axes()
			if !ok || len(axes) != 2 || axes[0] != want[p][0] || axes[1] != want[p][1] {
				return nil, corrupt("group %d HDU %d: axes %v, want %v", gi, p, axes, want[p])
			}
			if arrays[p], err = readImageData(img); err != nil {
				return nil, corrupt("group %d HDU %d: %v", gi, p, err)
			}
		}
		c.dirty, c.beam, c.gain = arrays[0], arrays[1], arrays[2]
		if groupSum(c) != strings.TrimSpace(sum) {
			return nil, corrupt("group %d: checksum mismatch", gi)
		}
		cs = append(cs, c)
	}
	return cs, nil
}

// CompressFile returns the compressed products of the visibility table
// name (read with OpenTable and ropt) on g, through the cache in dir; the
// read options are part of the cache key. An empty dir compresses without a
// cache (status CacheMiss).
func CompressFile(dir, name string, g Grid, opt CompressOptions, ropt ReadOptions) ([]*Compressed, CacheStatus, error) {
	open := func(name string) (ChunkReader, error) { return OpenTable(name, ropt) }
	if dir == "" {
		r, err := open(name)
		if err != nil {
			return nil, 0, err
		}
		defer r.(io.Closer).Close()
		cs, err := CompressStream(r, g, opt)
		if err != nil {
			return nil, 0, fmt.Errorf("%s: %w", name, err)
		}
		return cs, CacheMiss, nil
	}
	return CompressCached(dir, name, g, opt, fmt.Sprintf("read %+v", ropt), open)
}
