package uv

import "testing"

// The orientation and centre pixel are fixed by ../shared/conventions.md:
// CDELT1 < 0 (x east decreases along axis 1), CDELT2 > 0, centre pixel at
// 0-based (N/2, N/2).
func TestGridConvention(t *testing.T) {
	g := Grid{N: 8, Pixel: 0.5, X0: 1, Y0: -2}
	if x, y := g.XY(4, 4); x != 1 || y != -2 {
		t.Errorf("centre pixel (4,4) at (%v,%v), want the grid centre (1,-2)", x, y)
	}
	if x, _ := g.XY(5, 4); x != 0.5 {
		t.Errorf("one pixel up axis 1: x = %v, want 0.5 (west of centre)", x)
	}
	if _, y := g.XY(4, 5); y != -1.5 {
		t.Errorf("one pixel up axis 2: y = %v, want -1.5 (north of centre)", y)
	}
	for k := range g.Len() {
		x, y := g.Centre(k)
		i, j := g.Pix(x, y)
		if int(i) != k%g.N || int(j) != k/g.N || i != float64(int(i)) || j != float64(int(j)) {
			t.Fatalf("pixel %d: round trip gives (%v,%v)", k, i, j)
		}
	}
}
