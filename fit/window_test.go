package fit

import (
	"math"
	"testing"

	"deflect/source"
	"deflect/uv"
)

// TestWindowedRenderingMatchesFullGrid compares the likelihood's model
// image, rendered on the window of the lensed emission, with a rendering
// of the whole grid at the same tolerance: the flux outside the window
// must be below the render tolerance's effect.
func TestWindowedRenderingMatchesFullGrid(t *testing.T) {
	dir := t.TempDir()
	m, truth := writeSimModel(t, dir, 0.05, 128, "", smallSim)
	l, err := NewLikelihood(m, LikelihoodOptions{})
	if err != nil {
		t.Fatal(err)
	}
	ev, err := l.Evaluate(truth)
	if err != nil {
		t.Fatal(err)
	}
	full, _ := source.Render(nil, l.Grid, ev.Lens.Prepare(), ev.Source, source.RenderOptions{Tol: l.renderTol})
	win := ev.Datasets[0].Groups[0].Model
	var e2, s2, fw, ff float64
	for k := range full {
		e2 += (win[k] - full[k]) * (win[k] - full[k])
		s2 += full[k] * full[k]
		fw += win[k]
		ff += full[k]
	}
	if rel := math.Sqrt(e2 / s2); rel > 1e-3 {
		t.Errorf("windowed image differs from the full rendering by %.3g (relative rms)", rel)
	}
	if math.Abs(fw-ff) > 2e-4*ff {
		t.Errorf("windowed flux %g, full %g", fw, ff)
	}
	vals := l.pm.values(nil, truth)
	lens, _ := l.pm.lens(vals)
	src, _ := l.pm.source(vals, l.RefFreq)
	w, ok := renderWindow(l.Grid, lens, src.Components, 0, 0, make([]float64, 2*l.Grid.Len()))
	if !ok || w.n >= l.Grid.N {
		t.Errorf("window %+v covers the whole %d² grid; want a smaller one for a compact source", w, l.Grid.N)
	}
	t.Logf("window %d² of the %d² grid", w.n, l.Grid.N)
}

// TestWindowCentres checks that the window's list of centres gives the
// values of Centre, bit for bit.
func TestWindowCentres(t *testing.T) {
	w := window{g: uv.Grid{N: 64, Pixel: 0.05, X0: 0.3, Y0: -0.2}, i0: 5, j0: 9, n: 32, dx: 0.013, dy: -0.007}
	x, y := make([]float64, w.n*w.n), make([]float64, w.n*w.n)
	w.Centres(x, y)
	for k := range x {
		if cx, cy := w.Centre(k); x[k] != cx || y[k] != cy {
			t.Fatalf("pixel %d: Centres (%v, %v), Centre (%v, %v)", k, x[k], y[k], cx, cy)
		}
	}
}
