package conduction

import (
	"math"

	"github.com/settle-lab/settle/predict/surface"
)

// NaturalH returns h(Ts) = scale·surface.Coefficient(...) for the specimen in still
// air and surroundings at ambientC: natural convection (the specimen's Convection
// geometry and length) plus grey-body radiation with its Emissivity, W/(m²·K).
// It returns nil for a shape without a one-dimensional surface model (see
// Specimen.Convection). scale is the fitted correction factor (1: the correlations
// as they stand). With sp.ForcedH set, the convective part is that constant instead
// (moving air), despite the name.
func NaturalH(sp Specimen, scale, ambientC float64) func(surfaceC float64) float64 {
	g, length, err := sp.Convection()
	if err != nil {
		return nil
	}
	eps, forced := sp.Emissivity, sp.ForcedH
	return func(ts float64) float64 {
		var h float64
		if forced > 0 {
			h = scale * (forced + surface.Radiation(eps, ts, ambientC))
		} else {
			h = scale * surface.Coefficient(g, length, eps, ts, ambientC)
		}
		if math.IsNaN(h) || h < 0 {
			return 0
		}
		return h
	}
}
