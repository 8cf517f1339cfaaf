package conduction

import "math"

// Product solutions. A body that is the intersection of one-dimensional bodies
// (a short cylinder: infinite cylinder ∩ slab; a block: slab ∩ slab ∩ slab) has,
// with the same h on every face and a uniform initial excess, θ/θi equal to the
// product of the one-dimensional θ/θi, each with its own Bi and Fo. Because the
// factors depend on separate coordinates, the volume mean is the product of the
// one-dimensional means too.

// factor is one one-dimensional factor of a product: its series (nil for an
// infinite extent, factor 1) and the ratio of its length to the reference length.
type factor struct {
	series *Series
	ratio  float64
}

func newFactor(s Shape, bi, ratio float64, terms int) factor {
	if math.IsInf(ratio, 1) {
		return factor{ratio: ratio}
	}
	if !(ratio > 0) {
		panic("conduction: a product length ratio must be > 0")
	}
	return factor{series: NewSeries(s, bi*ratio, terms), ratio: ratio}
}

// theta is the factor at reference Fourier number fo: its own Fo is fo/ratio².
func (f factor) theta(fo, pos float64) float64 {
	if f.series == nil {
		return 1
	}
	return f.series.Theta(fo/(f.ratio*f.ratio), pos)
}

func (f factor) meanTheta(fo float64) float64 {
	if f.series == nil {
		return 1
	}
	return f.series.MeanTheta(fo / (f.ratio * f.ratio))
}

// FiniteCylinder is a cylinder of radius r0 and length 2L, cooled on its side and
// both ends with the same h: θ/θi = θ_cylinder(r)·θ_slab(z). Its Bi and Fo are
// based on r0.
type FiniteCylinder struct {
	radial, axial factor
}

// NewFiniteCylinder returns a cylinder with Biot number bi = h·r0/k and half-length
// halfLength = L/r0 (+Inf: the infinite cylinder), each factor holding at most
// terms terms (0: DefaultTerms). The end faces then have Bi = bi·halfLength and
// Fo = fo/halfLength².
func NewFiniteCylinder(bi, halfLength float64, terms int) *FiniteCylinder {
	return &FiniteCylinder{
		radial: newFactor(Cylinder, bi, 1, terms),
		axial:  newFactor(Slab, bi, halfLength, terms),
	}
}

// Theta returns θ/θi at fo = α·t/r0², radius r = r/r0 and axial position z = z/L
// from the mid-plane (both in [0, 1]).
func (c *FiniteCylinder) Theta(fo, r, z float64) float64 {
	return c.radial.theta(fo, r) * c.axial.theta(fo, z)
}

// MeanTheta returns the volume mean of θ/θi at fo = α·t/r0².
func (c *FiniteCylinder) MeanTheta(fo float64) float64 {
	return c.radial.meanTheta(fo) * c.axial.meanTheta(fo)
}

// Block is a rectangular block of half-sides Lx, Ly, Lz cooled on all six faces
// with the same h: θ/θi = θ_slab(x)·θ_slab(y)·θ_slab(z). Its Bi and Fo are based on
// Lx.
type Block struct {
	x, y, z factor
}

// NewBlock returns a block with Biot number bi = h·Lx/k and half-sides ly = Ly/Lx
// and lz = Lz/Lx (+Inf: infinite in that direction, e.g. a long square bar), each
// factor holding at most terms terms (0: DefaultTerms).
func NewBlock(bi, ly, lz float64, terms int) *Block {
	return &Block{
		x: newFactor(Slab, bi, 1, terms),
		y: newFactor(Slab, bi, ly, terms),
		z: newFactor(Slab, bi, lz, terms),
	}
}

// Theta returns θ/θi at fo = α·t/Lx² and position x/Lx, y/Ly, z/Lz (each in
// [0, 1], 0 the mid-plane).
func (b *Block) Theta(fo, x, y, z float64) float64 {
	return b.x.theta(fo, x) * b.y.theta(fo, y) * b.z.theta(fo, z)
}

// MeanTheta returns the volume mean of θ/θi at fo = α·t/Lx².
func (b *Block) MeanTheta(fo float64) float64 {
	return b.x.meanTheta(fo) * b.y.meanTheta(fo) * b.z.meanTheta(fo)
}
