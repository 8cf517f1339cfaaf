// Package material is a small built-in table of common lab specimen materials with
// the properties the heat-transfer models need: density, specific heat, thermal
// conductivity and a typical emissivity, each row naming where its values come
// from.
//
// The values are room-temperature (about 300 K) handbook figures. Most are from
// memory of the printed tables (Incropera et al., "Fundamentals of Heat and Mass
// Transfer", 6th ed., Tables A.1–A.3), and every row's Source says so; none has been
// checked against the printed page. Emissivity depends far more on the surface
// (polished, oxidized, painted) than on the material, so the value here is only a
// starting point for a fit, never a measurement. Properties also vary with grade,
// moisture (concrete, mortar, brick, wood) and temperature; prefer the specimen's own
// data sheet where the lab has one.
package material
