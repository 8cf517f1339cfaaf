// Package material is a small built-in table of common lab specimen materials with
// the properties the heat-transfer models need: density, specific heat, thermal
// conductivity and a typical emissivity, each row naming where its values come
// from.
//
// The values are room-temperature (about 300 K) handbook figures. Most are from
// memory of the printed tables (Incropera et al., "Fundamentals of Heat and Mass
// Transfer", 6th ed., Tables A.1–A.3), and every row's Source says so; none has been
// checked against the printed page. Emissivity depends far more on the surface than
// on the material: each metal carries a bright and an oxidised range, and its default
// is the middle of the oxidised one, the state of metal taken out of a furnace (a
// bright-metal value there would make the fitted convection too strong near room
// temperature and a "ready to handle" forecast too early). The value is only a
// starting point for a fit, never a measurement. Properties also vary with grade,
// moisture (concrete, mortar, brick, wood) and temperature; prefer the specimen's own
// data sheet where the lab has one.
package material
