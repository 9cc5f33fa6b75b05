// Package vmath evaluates elementary functions over slices, four values at
// a time with AVX2 and FMA on amd64 CPUs that have them and one at a time
// elsewhere. It serves the inner loops of the rendering of parametric
// sources, and HaveAVX2FMA is the CPU-feature check of every vector kernel
// of the module (lensmodel, uv/nufft).
package vmath
