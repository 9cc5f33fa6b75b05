package probe

import (
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"slices"
	"testing"

	"deflect/fit"
)

// TestDirectCalibration is acceptance test (iii): under the null hypothesis
// (data = base model + noise, no central image) the direct test's p-values
// at the probed position are uniform on [0, 1]. The Kolmogorov–Smirnov
// statistic D of 400 p-values is compared with its 1% critical value
// 1.63/√n (asymptotic Kolmogorov distribution; common practice).
func TestDirectCalibration(t *testing.T) {
	if os.Getenv("DEFLECT_LONG_TESTS") != "1" {
		t.Skip("set DEFLECT_LONG_TESTS=1 for the calibration test")
	}
	dir := t.TempDir()
	truth := scenario(t, dir, "truth.toml", 0, false)
	for _, f := range []string{"a.csv", "b.csv"} {
		os.WriteFile(filepath.Join(dir, f), []byte("u,v,re,im,weight\n1,1,0,0,1\n"), 0o644)
	}
	data := makeData(t, dir, truth, denseCoverage, 1e4, 1)
	m, err := fit.ReadModel(truth)
	if err != nil {
		t.Fatal(err)
	}
	g, _ := ModelGrid(m, data, 128)
	sky := NewSky(m, g, data)
	rows := &Rows{}
	for i, d := range data {
		base, err := sky.Visibilities(m.Start(), i, d, Disc{R: 0.2})
		if err != nil {
			t.Fatal(err)
		}
		rows.Add(d, base, 1)
	}
	const n = 400
	ps := make([]float64, n)
	rnd := rand.New(rand.NewPCG(1, 1))
	for i := range ps {
		for k := range rows.Data {
			s := 1 / math.Sqrt(rows.W[k])
			rows.Data[k] = rows.Base[k] + complex(s*rnd.NormFloat64(), s*rnd.NormFloat64())
		}
		d, err := DirectTest(rows, 0, 0, 0, 0)
		if err != nil {
			t.Fatal(err)
		}
		ps[i] = d.FixedP
	}
	slices.Sort(ps)
	var D float64
	for i, p := range ps {
		D = math.Max(D, math.Max(math.Abs(float64(i+1)/n-p), math.Abs(p-float64(i)/n)))
	}
	if crit := 1.63 / math.Sqrt(n); D > crit {
		t.Errorf("KS D = %.4f > %.4f (1%% level): direct-test p-values are not uniform", D, crit)
	} else {
		t.Logf("KS D = %.4f (1%% critical value %.4f) over %d null simulations", D, crit, n)
	}
}
