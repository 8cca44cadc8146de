package render

import (
	"fmt"
	"io"
	"os"
	"path/filepath"
	"testing"
)

// BenchmarkRenderAll renders every picture of a default run: slices of the
// three planes at the nine default output times in both looks (54 PNGs),
// the xy time-lapse GIF, the 3D view in both looks, all plots (PNG and SVG)
// and the report, for a 100³ synthetic box and a 200-row synthetic series.
func BenchmarkRenderAll(b *testing.B) {
	times := []float64{1, 2, 4, 8, 12, 24, 72, 168, 672}
	vols := make([]Volume, len(times))
	for i := range times {
		vols[i] = synthVolume(100, float64(i)/float64(len(times)-1), 1)
	}
	s := synthSeries(200, 0.45)
	b.ResetTimer()
	for b.Loop() {
		dir := b.TempDir()
		var frames []Frame
		var slices []string
		for i, v := range vols {
			out, err := RenderVolume(dir, v.Phase, v.NX, v.NY, v.NZ, v.VoxelUM, Options{NoCutAway: i != len(vols)-1,
				ShowAge: true, AgeH: times[i], Prefix: fmt.Sprintf("t%07.2fh_", times[i])})
			if err != nil {
				b.Fatal(err)
			}
			slices = append(slices, out...)
			frames = append(frames, Frame{AgeH: times[i], Phase: v.Phase})
		}
		err := WriteFileAtomic(filepath.Join(dir, "timelapse_xy.gif"), func(w io.Writer) error {
			return WriteTimeLapse(w, frames, 100, 100, 100, 1, PlaneXY, 50, SliceOptions{})
		})
		if err != nil {
			b.Fatal(err)
		}
		figs, err := RenderPlots(s, PlotOptions{WC: 0.45, SetTimeH: 5, DepercolationTimeH: 90})
		if err != nil {
			b.Fatal(err)
		}
		r := &Report{Title: "bench", Results: KeyResults(s, 5, 90)}
		for _, f := range figs {
			for _, x := range []struct {
				ext string
				b   []byte
			}{{".png", f.PNG}, {".svg", f.SVG}} {
				if err := os.WriteFile(filepath.Join(dir, f.Name+x.ext), x.b, 0o644); err != nil {
					b.Fatal(err)
				}
			}
			r.Plots = append(r.Plots, Image{Name: f.Name, Caption: f.Title, PNG: f.PNG})
		}
		for _, p := range slices[len(slices)-8:] {
			png, err := os.ReadFile(p)
			if err != nil {
				b.Fatal(err)
			}
			r.Slices = append(r.Slices, Image{Name: fmt.Sprintf("s%d", len(r.Slices)), Caption: filepath.Base(p), PNG: png})
		}
		if err := WriteFileAtomic(filepath.Join(dir, "report.html"), func(w io.Writer) error { return WriteReport(w, r) }); err != nil {
			b.Fatal(err)
		}
		if len(slices) != 9*6+2 {
			b.Fatalf("%d slice and 3D files; want 56", len(slices))
		}
	}
}

// BenchmarkSlice100 renders one slice of a 100³ box.
func BenchmarkSlice100(b *testing.B) {
	v := synthVolume(100, 0.5, 1)
	for b.Loop() {
		if _, err := RenderSlice(v, PlaneXY, 50, SliceOptions{}); err != nil {
			b.Fatal(err)
		}
	}
}

// BenchmarkCutAway100 renders the 3D view of a 100³ box.
func BenchmarkCutAway100(b *testing.B) {
	v := synthVolume(100, 0.5, 1)
	for b.Loop() {
		if _, err := RenderCutAway(v, CutAwayOptions{}); err != nil {
			b.Fatal(err)
		}
	}
}
