package voxel

import (
	"fmt"
	"os"
	"strconv"
	"strings"
	"testing"
	"time"

	"gelspace/kinetics"
)

func TestEngineExplore(t *testing.T) {
	if os.Getenv("GELSPACE_EXPLORE") == "" {
		t.Skip("exploration printout; set GELSPACE_EXPLORE=1")
	}
	n, _ := strconv.Atoi(os.Getenv("GELSPACE_EXPLORE"))
	if n < 20 {
		n = 60
	}
	g := enginePaste(t, n, 1, 0.5, 1)
	p := kinetics.DefaultParams()
	for _, kv := range strings.Split(os.Getenv("GELSPACE_P"), ",") {
		k, v, _ := strings.Cut(kv, "=")
		f, _ := strconv.ParseFloat(v, 64)
		switch k {
		case "v3s":
			p.Dissolve[0].VelocityUMPerH = f
		case "v2s":
			p.Dissolve[1].VelocityUMPerH = f
		case "beta":
			for i := range p.Dissolve[:4] {
				p.Dissolve[i].ThroughProduct = f
			}
		case "j":
			p.CSHNucleationPerUM2H = f
		case "sat":
			p.SilicateSaturation = f
		case "d0":
			p.ProductLengthUM = f
		case "seed":
			p.Growth[0].On[kinetics.CSHOuter] = f
			p.Growth[0].On[kinetics.CSHInner] = f
		}
	}
	e, err := NewEngine(g, EngineSettings{Params: p, Thermal: kinetics.Thermal{TempC: 20}, Seed: 3})
	if err != nil {
		t.Fatal(err)
	}
	t0 := time.Now()
	prevH, prevQ := 0.0, 0.0
	for _, h := range []float64{0.25, 0.5, 1, 2, 3, 4, 5, 6, 7, 8, 9, 10, 11, 12, 14, 16, 20, 24, 36, 48, 72, 168, 336, 672} {
		if err := e.AdvanceTo(h); err != nil {
			t.Fatal(err)
		}
		q := e.HeatJPerG()
		ev, st := e.Events()
		fmt.Printf("t=%6.1f α=%.3f c3s=%.3f c2s=%.3f c3a=%.3f c4af=%.3f q=%6.1f flow=%.3f ev=%d st=%d fCSH=%d fCH=%d csh=%d ch=%d aft=%d afm=%d hg=%d w=%.3f\n", h, e.Alpha(), e.AlphaOf(kinetics.C3S), e.AlphaOf(kinetics.C2S), e.AlphaOf(kinetics.C3A), e.AlphaOf(kinetics.C4AF), q, (q-prevQ)/(h-prevH)/3.6, ev, st,
			e.Dissolved(kinetics.CSHOuter), e.Dissolved(kinetics.CH), e.Count(kinetics.CSHInner)+e.Count(kinetics.CSHOuter), e.Count(kinetics.CH), e.Count(kinetics.AFt), e.Count(kinetics.AFm), e.Count(kinetics.Hydrogarnet), float64(e.Count(kinetics.Water))/float64(g.Len()))
		prevH, prevQ = h, q
	}
	fmt.Println("wall", time.Since(t0))
}
