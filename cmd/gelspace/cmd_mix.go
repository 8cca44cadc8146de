package main

import (
	"fmt"
	"io"
	"text/tabwriter"

	"github.com/spf13/pflag"

	"gelspace/cmd/gelspace/run"
	"gelspace/kinetics"
)

type mixOpts struct {
	configFlags
	json bool
}

func mixCommand() *command {
	return &command{
		name:    "mix",
		args:    "[CONFIG] [flags]",
		summary: "print the resolved mix: phase mass and volume %, densities, initial solid fraction, PSD statistics",
		examples: `  gelspace mix                               # the embedded default (Redhaven Works RW-G)
  gelspace mix configs/rw-f-oxides.toml      # phases from an oxide analysis (Bogue)
  gelspace mix my.toml --set mix.w_c=0.40 --json
`,
		flags: func(fs *pflag.FlagSet) any {
			o := &mixOpts{}
			addConfigFlags(fs, &o.configFlags)
			fs.BoolVar(&o.json, "json", false, "print the mix as JSON")
			return o
		},
		run: func(opts any, fs *pflag.FlagSet, stdout, stderr io.Writer) error {
			o := opts.(*mixOpts)
			cfg, err := o.load(fs, "mix")
			if err != nil {
				return err
			}
			m, err := run.Resolve(cfg)
			if err != nil {
				return err
			}
			rep := m.Report()
			if o.json {
				return run.WriteJSON(stdout, rep)
			}
			if !o.quiet {
				printMix(stdout, rep)
			}
			return nil
		},
	}
}

// printMix writes the human form of the report.
func printMix(w io.Writer, rep run.MixReport) {
	fmt.Fprintf(w, "config   %s\n", rep.Source)
	if rep.Cement != "" {
		fmt.Fprintf(w, "cement   %s\n", rep.Cement)
	}
	ratio := "w/c    "
	if len(rep.SCMs) > 0 {
		ratio = "w/b    " // water to binder (cement + SCMs)
	}
	fmt.Fprintf(w, "%s  %g\ndensity  %.3f g/cm³ (powder)\nsolids   %.4f initial solid volume fraction\n\n", ratio, rep.WC, rep.DensityGPerCM, rep.SolidFraction)
	tw := tabwriter.NewWriter(w, 2, 4, 2, ' ', tabwriter.AlignRight)
	fmt.Fprintln(tw, "phase\trole\tρ g/cm³\tmass %\tvolume %\tpaste vol %\t")
	for _, p := range rep.Phases {
		fmt.Fprintf(tw, "%s\t%s\t%.2f\t%.2f\t%.2f\t%.2f\t\n", p.Name, p.Role, p.DensityGPerCM3, p.MassPercent, p.VolumePercent, p.PastePercent)
	}
	fmt.Fprintf(tw, "water\tpore\t%.3f\t\t\t%.2f\t\n", kinetics.WaterDensity, 100*(1-rep.SolidFraction))
	tw.Flush()
	if len(rep.SCMs) > 0 {
		fmt.Fprintln(w, "\nbinder (cement + SCMs); an SCM's inert part is counted in the inert row above")
		tw := tabwriter.NewWriter(w, 2, 4, 2, ' ', tabwriter.AlignRight)
		fmt.Fprintln(tw, "SCM\tmass %\tvolume %\tρ g/cm³\tamorphous %\td10 µm\td50 µm\td90 µm\tm²/kg (PSD)\t")
		for _, s := range rep.SCMs {
			fmt.Fprintf(tw, "%s\t%.1f\t%.1f\t%.2f\t%.0f\t%.2f\t%.2f\t%.2f\t%.0f\t\n", s.Name, s.MassPercent, s.VolumePercent, s.DensityGPerCM3, s.AmorphousPercent, s.D10UM, s.D50UM, s.D90UM, s.SurfaceM2PerKg)
		}
		tw.Flush()
		for _, s := range rep.SCMs {
			fmt.Fprintf(w, "  %s: reactive part %s; %s; %s", s.Kind, s.Composition, s.PSD, s.Representation)
			if s.CoarserThanBox > 0.0005 {
				fmt.Fprintf(w, "; %.1f %% coarser than the box's largest particle, its finer sizes scaled up to the SCM's full mass (not carried like the cement's)", 100*s.CoarserThanBox)
			}
			fmt.Fprintln(w)
		}
	}
	if b := rep.Bogue; b != nil {
		branch := "A/F ≥ 0.64"
		if b.SolidSolution {
			branch = "A/F < 0.64, ferrite solid solution reported as C4AF"
		}
		fmt.Fprintf(w, "\nBogue (ASTM C150 Annex A1, %s), mass %% of cement: C3S %.1f  C2S %.1f  C3A %.1f  C4AF %.1f\n", branch, b.C3S, b.C2S, b.C3A, b.C4AF)
	}
	p := rep.PSD
	fmt.Fprintf(w, "\nPSD      %s\n", p.Description)
	fmt.Fprintf(w, "         d10 %.2f µm, d50 %.2f µm, d90 %.2f µm\n", p.D10UM, p.D50UM, p.D90UM)
	fmt.Fprintf(w, "surface  %.0f m²/kg from the PSD, not Blaine (smooth spheres); %.0f m²/kg digitised (voxel faces)\n", p.SurfaceSpheresM2PerKg, p.SurfaceVoxelM2PerKg)
	fmt.Fprintf(w, "box      %d³ voxels of %g µm; particles 1 to %d voxels (≤ %g µm, half the edge)\n", rep.Box.Voxels, rep.Box.VoxelUM, p.MaxDiameterVoxels, p.MaxDiameterUM)
	fmt.Fprintf(w, "fines    %.2f %% finer than one voxel, %s\n", 100*p.FinerThanVoxel, p.FineRepresentation)
	if p.Carried > 0 {
		fmt.Fprintf(w, "coarse   %.2f %% coarser than the largest particle, carried outside the box as shrinking spheres (%d size bins, to %.0f µm): every gram takes part\n", 100*p.Carried, p.CarriedBins, p.CarriedMaxUM)
	} else {
		fmt.Fprintf(w, "coarse   none coarser than the largest particle\n")
	}
	if rr := p.RosinRammler; rr != nil {
		if rr.Source == "given" {
			fmt.Fprintf(w, "RR       x′ %.2f µm, n %.3f (given)\n", rr.XUM, rr.N)
		} else {
			fmt.Fprintf(w, "RR fit   x′ %.2f µm, n %.3f on %d rows: R² %.4f, largest deviation %.2f passing %% points (RRSB plot, DIN 66145)\n", rr.XUM, rr.N, rr.Rows, rr.R2, rr.MaxDevPercent)
		}
	}
}
