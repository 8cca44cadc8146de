package main

import (
	"fmt"
	"io"
	"os"
	"sort"
	"strconv"
	"strings"
	"text/tabwriter"

	"github.com/spf13/pflag"

	"gelspace/cmd/gelspace/run"
	"gelspace/configs"
	"gelspace/kinetics"
	"gelspace/percolation"
	"gelspace/render"
)

type analyzeOpts struct {
	mapping  string
	json     bool
	periodic string
	tol      float64
	quiet    bool
}

func analyzeCommand() *command {
	return &command{
		name:    "analyze",
		args:    "VOLUME [--map LABEL=CLASS,...] [--json]",
		summary: "porosity, connectivity and D/D0 of a saved or imported 3D volume (.vti, .npy)",
		examples: `  gelspace analyze demo-run/final.vti                  # a volume gelspace wrote (our phase ids)
  gelspace analyze scan.npy --map 0=pore,1=solid,2=csh --json   # a segmented X-ray tomogram
  gelspace analyze scan.npy --map 0=pore,255=solid --periodic=false

CLASS is pore, solid or csh (or any gelspace phase key, such as ch or c3s).
Unmapped labels are refused. Without --map, labels are gelspace phase ids.
Solids are bonded across grains only through hydrates when the volume
carries particle ids (gelspace .vti); otherwise all touching solid voxels
are taken as bonded. --periodic defaults to true for gelspace volumes
(periodic boxes) and false for others.
`,
		flags: func(fs *pflag.FlagSet) any {
			o := &analyzeOpts{}
			fs.StringVar(&o.mapping, "map", "", "label classes of an imported image: LABEL=CLASS,... (CLASS: pore, solid, csh or a phase key)")
			fs.BoolVar(&o.json, "json", false, "print the result as JSON")
			fs.StringVar(&o.periodic, "periodic", "auto", "treat the box as periodic: true, false or auto")
			fs.Float64Var(&o.tol, "tol", percolation.DefaultTol, "relative residual of the diffusivity solve")
			fs.BoolVarP(&o.quiet, "quiet", "q", false, "print nothing but errors")
			return o
		},
		run: func(opts any, fs *pflag.FlagSet, stdout, stderr io.Writer) error {
			return runAnalyze(opts.(*analyzeOpts), fs, stdout)
		},
	}
}

// parseLabelMap parses LABEL=CLASS pairs into a label → phase table.
func parseLabelMap(cmd, s string) (map[int]kinetics.ID, error) {
	out := map[int]kinetics.ID{}
	for _, kv := range strings.Split(s, ",") {
		kv = strings.TrimSpace(kv)
		if kv == "" {
			continue
		}
		l, c, ok := strings.Cut(kv, "=")
		n, err := strconv.Atoi(strings.TrimSpace(l))
		if !ok || err != nil || n < 0 || n > 255 {
			return nil, &usageError{fmt.Sprintf("%s: --map %q: each entry must be LABEL=CLASS with LABEL an integer 0–255", cmd, kv)}
		}
		var id kinetics.ID
		switch c = strings.TrimSpace(c); c {
		case "pore":
			id = kinetics.Water
		case "solid":
			id = kinetics.Inert
		case "csh":
			id = kinetics.CSHOuter
		default:
			p := kinetics.ByKey(c)
			if p == nil {
				return nil, &usageError{fmt.Sprintf("%s: --map %q: class %q must be pore, solid, csh or a phase key (%s)", cmd, kv, c, strings.Join(kinetics.Keys(kinetics.RolePore, kinetics.RoleClinker, kinetics.RoleSulfate, kinetics.RoleFiller, kinetics.RoleHydrate), ", "))}
			}
			id = p.ID
		}
		if _, dup := out[n]; dup {
			return nil, &usageError{fmt.Sprintf("%s: --map: label %d given twice", cmd, n)}
		}
		out[n] = id
	}
	if len(out) == 0 {
		return nil, &usageError{cmd + ": --map is empty: give LABEL=CLASS pairs"}
	}
	return out, nil
}

func runAnalyze(o *analyzeOpts, fs *pflag.FlagSet, stdout io.Writer) error {
	if fs.NArg() != 1 {
		return &usageError{fmt.Sprintf("analyze: takes one VOLUME (.vti or .npy), got %d arguments; see gelspace analyze --help", fs.NArg())}
	}
	path := fs.Arg(0)
	if !(o.tol > 0 && o.tol < 1) {
		return &usageError{fmt.Sprintf("analyze: --tol %g: must be > 0 and < 1", o.tol)}
	}
	var lm map[int]kinetics.ID
	if o.mapping != "" {
		var err error
		if lm, err = parseLabelMap("analyze", o.mapping); err != nil {
			return err
		}
	}
	switch o.periodic {
	case "auto", "true", "false":
	default:
		return &usageError{fmt.Sprintf("analyze: --periodic %q: must be true, false or auto", o.periodic)}
	}
	g, err := run.LoadVolume(path, "analyze")
	if err != nil {
		return err
	}
	hasParticles := false
	for _, p := range g.Particle {
		if p != 0 {
			hasParticles = true
			break
		}
	}
	if lm != nil {
		var unmapped []int
		seen := map[int]bool{}
		for i, l := range g.Phase {
			id, ok := lm[int(l)]
			if !ok {
				if !seen[int(l)] {
					seen[int(l)] = true
					unmapped = append(unmapped, int(l))
				}
				continue
			}
			g.Phase[i] = id
		}
		if len(unmapped) > 0 {
			sort.Ints(unmapped)
			return &configs.InputError{File: path, Key: "--map", Msg: fmt.Sprintf("labels %v are in the volume but not in --map", unmapped)}
		}
	} else {
		for _, l := range g.Phase {
			if kinetics.Lookup(l) == nil {
				return &configs.InputError{File: path, Msg: fmt.Sprintf("label %d is not a gelspace phase id: give --map LABEL=CLASS for an imported image", l)}
			}
		}
	}
	if !hasParticles {
		// Without grain identities every solid voxel belongs to one body.
		for i, p := range g.Phase {
			if kinetics.IsSolid(p) {
				g.Particle[i] = 1
			}
		}
	}
	periodic := hasParticles
	switch o.periodic {
	case "auto":
	case "true":
		periodic = true
	case "false":
		periodic = false
	}
	box := percolation.Box{NX: g.NX, NY: g.NY, NZ: g.NZ, Periodic: [3]bool{periodic, periodic, periodic}}
	rep, err := run.Analyze(box, g, o.tol)
	if err != nil {
		return err
	}
	rep.Volume = path
	if o.json {
		return run.WriteJSON(stdout, rep)
	}
	if o.quiet {
		return nil
	}
	return printAnalysis(stdout, rep)
}

func printAnalysis(w io.Writer, r *run.Analysis) error {
	tw := tabwriter.NewWriter(w, 0, 4, 2, ' ', 0)
	fmt.Fprintf(tw, "volume\t%s (%d×%d×%d voxels of %g µm, periodic %v)\n", r.Volume, r.Dims[0], r.Dims[1], r.Dims[2], r.VoxelUM, r.Periodic)
	fmt.Fprintf(tw, "capillary porosity\t%.4f\n", r.Porosity)
	fmt.Fprintf(tw, "pores: connected fraction\t%.4f, spanning axes %s\n", r.PoresConnectedFraction, axesText(r.PoresSpanAxes))
	fmt.Fprintf(tw, "solids: connected fraction\t%.4f, spanning axes %s\n", r.SolidsConnectedFraction, axesText(r.SolidsSpanAxes))
	fmt.Fprintf(tw, "relative diffusivity D/D0\tx %.4g  y %.4g  z %.4g\n", r.RelDiffusivity[0], r.RelDiffusivity[1], r.RelDiffusivity[2])
	if err := tw.Flush(); err != nil {
		return err
	}
	_, err := fmt.Fprintln(w, "Model estimate for screening and research; not a substitute for standard tests.")
	return err
}

func axesText(a []string) string {
	if len(a) == 0 {
		return "none"
	}
	return strings.Join(a, ", ")
}

// renderCommand is gelspace render VOLUME.
type renderOpts struct {
	out       string
	mapping   string
	legendAll bool
	quiet     bool
	x, y, z   int
}

func renderCommand() *command {
	return &command{
		name:    "render",
		args:    "VOLUME [--out DIR]",
		summary: "slice images (phase colours and SEM-like grey) and a 3D cut-away of a volume",
		examples: `  gelspace render demo-run/final.vti --out pics
  gelspace render demo-run/final.vti --z 10 --x 80 --out pics   # chosen planes
  gelspace render scan.npy --map 0=pore,1=solid,2=csh --out scan-pics
`,
		flags: func(fs *pflag.FlagSet) any {
			o := &renderOpts{}
			fs.StringVarP(&o.out, "out", "o", "gelspace-render", "output folder")
			fs.StringVar(&o.mapping, "map", "", "label classes of an imported image: LABEL=CLASS,... (as in analyze)")
			fs.BoolVar(&o.legendAll, "legend-all", false, "list every phase in the legend, not only those present")
			fs.IntVar(&o.x, "x", -1, "position of the yz slice, voxels (default: the middle)")
			fs.IntVar(&o.y, "y", -1, "position of the xz slice, voxels (default: the middle)")
			fs.IntVar(&o.z, "z", -1, "position of the xy slice, voxels (default: the middle)")
			fs.BoolVarP(&o.quiet, "quiet", "q", false, "print nothing but errors")
			return o
		},
		run: func(opts any, fs *pflag.FlagSet, stdout, stderr io.Writer) error {
			o := opts.(*renderOpts)
			if fs.NArg() != 1 {
				return &usageError{fmt.Sprintf("render: takes one VOLUME (.vti or .npy), got %d arguments; see gelspace render --help", fs.NArg())}
			}
			path := fs.Arg(0)
			if o.out == "" {
				return &usageError{"render: --out must name a folder"}
			}
			if st, err := os.Stat(o.out); err == nil && !st.IsDir() {
				return &usageError{fmt.Sprintf("render: --out %s exists and is not a folder", o.out)}
			}
			var lm map[int]kinetics.ID
			if o.mapping != "" {
				var err error
				if lm, err = parseLabelMap("render", o.mapping); err != nil {
					return err
				}
			}
			g, err := run.LoadVolume(path, "render")
			if err != nil {
				return err
			}
			for i, l := range g.Phase {
				if id, ok := lm[int(l)]; ok {
					g.Phase[i] = id
				}
			}
			pos := map[render.Plane]int{}
			for _, c := range []struct {
				flag string
				v, n int
				p    render.Plane
			}{{"x", o.x, g.NX, render.PlaneYZ}, {"y", o.y, g.NY, render.PlaneXZ}, {"z", o.z, g.NZ, render.PlaneXY}} {
				if c.v == -1 {
					continue
				}
				if c.v < 0 || c.v >= c.n {
					return &usageError{fmt.Sprintf("render: --%s %d: must be between 0 and %d (the volume is %d×%d×%d voxels)", c.flag, c.v, c.n-1, g.NX, g.NY, g.NZ)}
				}
				pos[c.p] = c.v
			}
			// Only now, with every input checked, is the folder made.
			if err := os.MkdirAll(o.out, 0o755); err != nil {
				return err
			}
			files, err := render.RenderVolume(o.out, g.Phase, g.NX, g.NY, g.NZ, g.VoxelUM, render.Options{LegendAll: o.legendAll, Positions: pos})
			if err != nil {
				return err
			}
			if !o.quiet {
				fmt.Fprintf(stdout, "wrote %d images to %s\n", len(files), o.out)
			}
			return nil
		},
	}
}
