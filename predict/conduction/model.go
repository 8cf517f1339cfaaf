package conduction

import "math"

// seriesModel is the constant-h exact solution of a Specimen at one Biot number
// (on Size): one series for the one-dimensional shapes, a product of factors for a
// short cylinder (cylinder × slab) or a block (slab × slab × slab).
type seriesModel struct {
	parts []modelPart
}

// modelPart is one factor: its series and the multiplier that turns the specimen's
// Fo (on Size) into the factor's own Fo, (Size/own length)².
type modelPart struct {
	series  *Series
	foScale float64
}

// newSeriesModel builds the model of sp at bi, each factor holding enough terms to
// be accurate down to the specimen Fourier number minFo (at most maxTerms). near is
// the model of the same specimen at a nearby Bi, whose roots start the root search
// (its zero value: none).
func newSeriesModel(sp Specimen, bi, minFo float64, maxTerms int, near seriesModel) seriesModel {
	part := func(i int, s Shape, ratio float64) modelPart {
		scale := 1 / (ratio * ratio)
		n := min(TermsFor(minFo*scale), maxTerms)
		var prev *Series
		if i < len(near.parts) {
			prev = near.parts[i].series
		}
		return modelPart{series: newSeriesFrom(s, bi*ratio, n, prev), foScale: scale}
	}
	switch sp.Shape {
	case ShortCylinder:
		return seriesModel{parts: []modelPart{part(0, Cylinder, 1), part(1, Slab, sp.Length/sp.Size)}}
	case Cuboid:
		return seriesModel{parts: []modelPart{
			part(0, Slab, 1), part(1, Slab, sp.Length/sp.Size), part(2, Slab, sp.Width/sp.Size),
		}}
	}
	return seriesModel{parts: []modelPart{part(0, sp.Shape, 1)}}
}

// productCurve is θ/θi against the specimen's Fo at one position: the product of
// its factors' curves.
type productCurve []scaledCurve

type scaledCurve struct {
	c       Curve
	foScale float64
}

// curve returns the model's θ/θi curve at p: the first factor at p, the others at
// their mid-plane, or every factor's mean for VolumeMean.
func (m seriesModel) curve(p Position) productCurve {
	out := make(productCurve, len(m.parts))
	for i, part := range m.parts {
		var c Curve
		switch {
		case p == VolumeMean:
			c = part.series.Mean()
		case i == 0:
			c = part.series.At(float64(p))
		default:
			c = part.series.At(0)
		}
		out[i] = scaledCurve{c: c, foScale: part.foScale}
	}
	return out
}

// theta returns θ/θi at the specimen Fourier number fo.
func (pc productCurve) theta(fo float64) float64 {
	v := 1.0
	for _, f := range pc {
		v *= f.c.Theta(fo * f.foScale)
	}
	return v
}

// fill sets dst[i] = θ/θi at fo[i] through Curve.Fill (fast over evenly spaced
// fo); scratch holds at least 2·len(fo) values for a product of factors.
func (pc productCurve) fill(dst, fo, scratch []float64) {
	if len(pc) == 1 && pc[0].foScale == 1 {
		pc[0].c.Fill(dst, fo)
		return
	}
	scaled, part := scratch[:len(fo)], scratch[len(fo):2*len(fo)]
	for i := range fo {
		dst[i] = 1
	}
	for _, f := range pc {
		for i, v := range fo {
			scaled[i] = v * f.foScale
		}
		f.c.Fill(part, scaled)
		for i, v := range part {
			dst[i] *= v
		}
	}
}

// minPositive returns the smallest positive value of xs (+Inf if none).
func minPositive(xs []float64) float64 {
	m := math.Inf(1)
	for _, x := range xs {
		if x > 0 && x < m {
			m = x
		}
	}
	return m
}
