// Package configs is gelspace's run configuration: the schema of a config
// file, its defaults, its validation, and the example configs of the
// invented Redhaven Works demo (embedded; default.toml is the config used
// when none is given).
//
// A config is TOML. Load reads one (or the embedded default), applies
// --set style overrides ("mix.w_c=0.40", dotted keys, TOML values) and
// validates every key against its allowed range. The steps can be taken
// one at a time: ParseRaw or LoadRaw give a Raw tree of TOML values with
// the line of every key, Raw.Set and Raw.Put edit it (sweeps set their
// axis keys this way), Raw.Decode checks it against the schema and fills
// in Defaults, and Config.Validate checks the ranges and combinations.
//
// Units are those of the trade and are in the key names: mass percent for
// phases and oxides, µm for sizes, °C, hours, J/g; w/c is a mass ratio.
// Config.EngineSettings turns a config into the hydration engine's
// settings (voxel.EngineSettings, with kinetics.Params in SI inside).
//
// Every error about bad input is an *InputError: one line naming the file
// (or the --set override), the line, the key and the allowed range.
package configs
