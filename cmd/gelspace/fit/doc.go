// Package fit calibrates gelspace's kinetics to a measured isothermal
// calorimetry curve: it finds the three multipliers of a config's
// [kinetics] (dissolution_scale, nucleation_scale, through_product_scale)
// with which the model's curve matches the measured one.
//
// The measured curve (ReadMeasured) is cumulative heat (J/g of cement),
// heat flow (mW/g, integrated here by the trapezoid rule into heat
// released since the first row) or degree of hydration, against time_h.
// The model curve (Model.Curve) is the engine's heat (or α) at the
// measured times, averaged over a few boxes packed once each with fixed
// seeds; every evaluation hydrates clones of the same packed grids, so the
// objective is a deterministic function of the three multipliers. It is
// rough all the same: beyond a tiny step a change of multipliers changes
// the random path of the events, which on a 40³ box moves the curve about
// as much as halving or doubling the nucleation multiplier does, so
// nucleation is poorly determined by a calorimetry curve and fit.json's
// sensitivity says so.
//
// The misfit weighs the features of the curve that the three multipliers
// move apart: cumulative heat, log heat flow and the log times at which
// the heat reaches fractions of its final value, on a log-spaced time
// grid. Nelder–Mead (gonum/optimize) searches in log-multiplier space from
// the config's values, one multiplier at a time first, then all the free
// ones together, with a weak pull towards the start (DefaultPrior) that
// keeps a poorly determined multiplier from wandering along a ridge with
// another one; Settings.Fixed holds multipliers the user knows. Calibrate
// does all of it and returns fit.json's content; WriteOutputs writes
// fit.toml, fit.json and fit.png.
//
// The package prints nothing; a bad curve is a *configs.InputError naming
// the file, the line and the rule.
package fit
