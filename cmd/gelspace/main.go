// Command gelspace builds digital cement pastes, hydrates them and measures
// their set point, capillary-pore depercolation and transport. See
// gelspace --help.
package main

import (
	"errors"
	"fmt"
	"io"
	"os"
	"strings"

	"github.com/spf13/pflag"

	"gelspace/cmd/gelspace/run"
	"gelspace/configs"
	"gelspace/voxel"
)

func main() { os.Exit(Main(os.Args[1:], os.Stdout, os.Stderr)) }

// version is gelspace's version, recorded in outputs.
const version = run.Version

// caution is printed by --help and written in the README.
const caution = `gelspace predicts; it does not certify. Set times, porosities and
diffusivities are model estimates for screening and research, not
substitutes for standard tests or for the judgement of a licensed
engineer; local codes and specifications govern.`

// command is one subcommand.
type command struct {
	name, args, summary, examples string
	// run parses its flags from fs (already defined by flags) and does the
	// work.
	flags func(fs *pflag.FlagSet) any
	run   func(opts any, fs *pflag.FlagSet, stdout, stderr io.Writer) error
}

var commands []*command

func init() {
	commands = []*command{runCommand(), mixCommand(), packCommand(), analyzeCommand(), renderCommand(), sweepCommand(), fitCommand()}
}

// usageError is bad usage of the command line (exit status 2).
type usageError struct{ msg string }

func (e *usageError) Error() string { return e.msg }

// Main runs gelspace with args (without the program name) and returns the
// exit status: 0 success, 1 run-time failure, 2 bad usage or bad input.
// Every error goes through fail.
func Main(args []string, stdout, stderr io.Writer) int {
	if len(args) == 0 {
		topUsage(stderr)
		return 2
	}
	switch args[0] {
	case "-h", "--help", "help":
		if len(args) > 1 && args[0] == "help" {
			if c := findCommand(args[1]); c != nil {
				commandUsage(stdout, c, newFlagSet(c))
				return 0
			}
		}
		topUsage(stdout)
		return 0
	case "--version", "version":
		fmt.Fprintln(stdout, "gelspace", version)
		return 0
	}
	c := findCommand(args[0])
	if c == nil {
		return fail(stderr, &usageError{fmt.Sprintf("unknown command %q (commands: %s); see gelspace --help", args[0], commandNames())})
	}
	fs := newFlagSet(c)
	opts := c.flags(fs)
	if err := fs.Parse(args[1:]); err != nil {
		if errors.Is(err, pflag.ErrHelp) {
			commandUsage(stdout, c, fs)
			return 0
		}
		return fail(stderr, &usageError{fmt.Sprintf("%s: %v; see gelspace %s --help", c.name, err, c.name)})
	}
	return fail(stderr, c.run(opts, fs, stdout, stderr))
}

// fail prints err as one line and returns its exit status (0 for nil).
func fail(stderr io.Writer, err error) int {
	if err == nil {
		return 0
	}
	fmt.Fprintln(stderr, "gelspace: "+oneLine(err.Error()))
	return exitCode(err)
}

// exitCode is 2 for bad usage or bad input, 1 otherwise.
func exitCode(err error) int {
	var ue *usageError
	var ie *configs.InputError
	var pe *voxel.PackError
	if errors.As(err, &ue) || errors.As(err, &ie) || errors.As(err, &pe) {
		return 2
	}
	return 1
}

func findCommand(name string) *command {
	for _, c := range commands {
		if c.name == name {
			return c
		}
	}
	return nil
}

func commandNames() string {
	var n []string
	for _, c := range commands {
		n = append(n, c.name)
	}
	return strings.Join(n, ", ")
}

func newFlagSet(c *command) *pflag.FlagSet {
	fs := pflag.NewFlagSet(c.name, pflag.ContinueOnError)
	fs.SetOutput(io.Discard)
	fs.SortFlags = false
	return fs
}

func topUsage(w io.Writer) {
	fmt.Fprintf(w, `gelspace %s — hydration of Portland-cement paste in a 3D voxel box: set point,
capillary-pore depercolation, heat, phases and diffusivity from a cement (plain or
blended with silica fume, fly ash, slag or metakaolin) and a w/c or w/b.

Usage:
  gelspace <command> [arguments] [flags]

Commands:
`, version)
	for _, c := range commands {
		fmt.Fprintf(w, "  %-8s %s\n", c.name, c.summary)
	}
	fmt.Fprintf(w, `
Run 'gelspace <command> --help' for a command's flags and examples.
Exit status: 0 success, 1 run-time failure, 2 bad usage or bad input.

%s
`, caution)
}

func commandUsage(w io.Writer, c *command, fs *pflag.FlagSet) {
	if c.flags != nil && !fs.HasFlags() {
		c.flags(fs)
	}
	fmt.Fprintf(w, "Usage: gelspace %s %s\n\n%s\n\nFlags:\n%s\nExamples:\n%s\n%s\n", c.name, c.args, c.summary, fs.FlagUsages(), c.examples, caution)
}

// configFlags are the flags shared by commands that read a config.
type configFlags struct {
	sets  []string
	seed  int64
	size  int
	quiet bool
}

func addConfigFlags(fs *pflag.FlagSet, o *configFlags) {
	fs.StringArrayVar(&o.sets, "set", nil, "override a config key: --set KEY=VALUE, dotted key, repeatable (--set mix.w_c=0.4)")
	fs.Int64Var(&o.seed, "seed", 0, "random seed ≥ 0 (overrides the config's seed when given)")
	fs.IntVar(&o.size, "size", 0, "box edge in voxels (overrides box.voxels)")
	fs.BoolVarP(&o.quiet, "quiet", "q", false, "print nothing but errors")
}

// load reads the config named by the positional arguments (at most one;
// none means the embedded default) with the overrides.
func (o *configFlags) load(fs *pflag.FlagSet, cmd string) (*configs.Config, error) {
	if fs.NArg() > 1 {
		return nil, &usageError{fmt.Sprintf("%s: takes at most one CONFIG, got %d arguments; see gelspace %s --help", cmd, fs.NArg(), cmd)}
	}
	sets := append([]string(nil), o.sets...)
	if fs.Changed("seed") {
		if o.seed < 0 {
			return nil, &usageError{fmt.Sprintf("%s: --seed %d: must be ≥ 0", cmd, o.seed)}
		}
		sets = append(sets, fmt.Sprintf("seed=%d", o.seed))
	}
	if fs.Changed("size") {
		if err := checkSize(cmd, o.size); err != nil {
			return nil, err
		}
		sets = append(sets, fmt.Sprintf("box.voxels=%d", o.size))
	}
	return configs.Load(fs.Arg(0), sets)
}
