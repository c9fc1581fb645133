// Package model loads loopwright model files (YAML), checks them, and expands
// them into a System: scalar equations over named unknowns and parameters,
// every value in coherent SI, every equation dimensionally checked. It is the
// first stage of the pipeline model -> jacobian -> solve -> interact.
package model
