package configs

import "embed"

// FS holds every configs/*.toml file.
//
//go:embed *.toml
var FS embed.FS

// Default returns the text of default.toml.
func Default() []byte {
	b, err := FS.ReadFile("default.toml")
	if err != nil {
		panic("configs: default.toml is not embedded: " + err.Error())
	}
	return b
}
