//go:build !amd64

package nufft

// haveAVX is false off amd64: the portable loops of kernels_gen.go are used.
const haveAVX = false

func (p *Plan) interpBandAVX(lo, hi int, dst []complex128) { panic("nufft: no assembly kernels") }

func (p *Plan) spreadBandAVX(g []complex128, lo, hi int, c []complex128) {
	panic("nufft: no assembly kernels")
}
