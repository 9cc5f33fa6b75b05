package main

import (
	"math"

	"deflect/plots"
	"deflect/uv"
)

// The figure of "deflect image": the dirty image and the dirty beam side by
// side, drawn by plots.SkyFigure (east left, north up, equal aspect,
// plots.Viridis, colour bars with units).

// plotSky converts an image on a uv.Grid to the plots package's form (the
// same FITS pixel order and offsets).
func plotSky(g uv.Grid, data []float64) plots.SkyImage {
	return plots.SkyImage{N: g.N, Pixel: g.Pixel, X0: g.X0, Y0: g.Y0, Values: data}
}

// imageFigure returns the two-panel figure of a dirty image: the image in
// mJy/beam with the clean-beam ellipse in its south-east corner, and the
// dirty beam (peak 1) with the clean beam's half-power ellipse over its
// main lobe. The beam panel shows ±10 clean-beam major axes about the
// centre (at most the central half of the beam grid, at least ±8 pixels),
// where the sidelobes matter.
func imageFigure(di *uv.DirtyImage, title string) (*plots.Figure, error) {
	g := di.Grid
	beam := plots.Beam{Major: di.Clean.BMaj, Minor: di.Clean.BMin, PA: di.Clean.BPA}
	return plots.SkyFigure(
		plots.SkyPanel{Title: title, Image: plotSky(g, di.Image), Scale: 1e3, Unit: "mJy/beam", Beam: beam},
		plots.SkyPanel{Title: "dirty beam", Image: plotSky(uv.Grid{N: g.N, Pixel: g.Pixel}, di.Beam),
			Unit: "dirty beam (peak 1)", Beam: beam, BeamAtCentre: true, Zoom: beamZoom(g, beam)})
}

// beamZoom returns the box of pixel centres within ±h pixels of the beam
// grid's centre, h = 10 clean-beam major axes clamped to [8, N/4] pixels
// (N/4 without a clean beam), or nil when that is the whole grid.
func beamZoom(g uv.Grid, beam plots.Beam) *plots.Box {
	half := g.N / 4
	if beam.Major > 0 {
		half = int(math.Ceil(10 * beam.Major / g.Pixel))
	}
	half = max(8, min(half, g.N/4))
	if 2*half+1 >= g.N {
		return nil
	}
	r := (float64(half) + 0.5) * g.Pixel
	return &plots.Box{XMin: -r, XMax: r, YMin: -r, YMax: r}
}
