// Package kinetics holds the cement chemistry of gelspace as data and pure
// functions: the phase table, the hydration reactions with their volume
// stoichiometry, cement composition (mass and volume fractions, Bogue from an
// oxide analysis), Arrhenius temperature dependence and heat bookkeeping.
//
// Nothing here runs a simulation, and nothing imports another gelspace
// package, so every figure can be checked against handbooks on its own.
package kinetics
