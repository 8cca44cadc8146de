package voxel

import (
	"bytes"
	"crypto/sha256"
	"encoding/binary"
	"errors"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"testing"

	"gelspace/configs/fuzzmut"
	"gelspace/kinetics"
)

// Fuzz targets of the voxel package's parsers: PSD tables
// (FuzzPSDTable, in psd_test.go), .npy (FuzzNPY) and .vti (FuzzVTI)
// volumes, checkpoints (FuzzCheckpoint). `go test` runs their seed corpora; `go test -fuzz FuzzNPY
// ./voxel` explores further; GELSPACE_LONG=1 runs each body a million
// times on deterministic mutations of the seeds (TestFuzzLong).

func seedFiles(t testing.TB, names ...string) [][]byte {
	var out [][]byte
	for _, n := range names {
		data, err := os.ReadFile(filepath.Join("..", "testdata", n))
		if err != nil {
			t.Fatal(err)
		}
		out = append(out, data)
	}
	return out
}

var psdSeeds = [][]byte{
	[]byte("size_um,passing_percent\n1,5\n2,12\n4,25\n8,45\n16,70\n32,92\n64,100\n"),
	[]byte("# comment\npassing_percent,size_um,other\n5,1,x\n100,40,y\n"),
	[]byte("size_um,passing_percent\n1,5\n2,4\n"),
	[]byte("size_um,passing_percent\n0.5,nan\n"),
}

// fuzzPSD: a table is refused with an error or gives a PSD whose sizes
// increase and whose passing fractions are finite, non-decreasing and
// end at 1, with a cumulative curve between 0 and 1 that never falls.
func fuzzPSD(t testing.TB, data []byte) {
	p, err := ReadPSDTable(bytes.NewReader(data))
	if err != nil {
		if p != nil {
			t.Errorf("error %v with a PSD", err)
		}
		return
	}
	if len(p.sizesUM) == 0 || len(p.sizesUM) != len(p.passing) {
		t.Errorf("accepted table with %d sizes and %d passing values", len(p.sizesUM), len(p.passing))
		return
	}
	for i, x := range p.sizesUM {
		q := p.passing[i]
		if !(x > 0) || math.IsInf(x, 0) || math.IsNaN(q) || q < 0 || q > 1+1e-12 || i > 0 && (x <= p.sizesUM[i-1] || q < p.passing[i-1]) {
			t.Errorf("accepted table breaks its invariants at row %d: size %g, passing %g", i, x, q)
			return
		}
	}
	if last := p.passing[len(p.passing)-1]; math.Abs(last-1) > 1e-12 {
		t.Errorf("accepted table ends at passing %g, want 1", last)
	}
	prev := 0.0
	for _, x := range []float64{1e-3, 0.1, 1, 3, 10, 30, 100, 1000, 1e6} {
		q := p.Passing(x)
		if !(q >= prev && q <= 1) {
			t.Errorf("Passing(%g) = %g after %g", x, q, prev)
			return
		}
		prev = q
	}
}

func psdLongSeeds(t testing.TB) [][]byte {
	out := append([][]byte(nil), psdSeeds...)
	for _, c := range psdTableCases {
		out = append(out, []byte(c.csv))
	}
	return append(out, seedFiles(t, "psd/rw-g-laser.csv")...)
}

func npySeeds(t testing.TB) [][]byte {
	return append(smallNPYSeeds(), seedFiles(t, "volumes/gelspace-12.npy", "volumes/numpy-fortran-be-i8.npy", "volumes/numpy-le-i4.npy", "volumes/numpy-u2.npy")...)
}

// smallNPYSeeds are 2×2×2 arrays of several dtypes, byte orders and
// orders: small, so that a long run spends its time in the parser.
func smallNPYSeeds() [][]byte {
	var out [][]byte
	for _, c := range []struct {
		descr   string
		fortran bool
		size    int
		big     bool
	}{{"|u1", false, 1, false}, {"|b1", true, 1, false}, {"<i2", false, 2, false}, {">u4", true, 4, true}, {"<i8", false, 8, false}} {
		data := make([]byte, 8*c.size)
		for i := 0; i < 8; i++ {
			v := []byte{1, 21, 23, 101, 110, 1, 2, 41}[i]
			if c.descr == "|b1" {
				v &= 1
			}
			if c.big {
				data[i*c.size+c.size-1] = v
			} else {
				data[i*c.size] = v
			}
		}
		out = append(out, npyFile(c.descr, c.fortran, "(2, 2, 2)", data))
	}
	return out
}

// fuzzNPY: an .npy file is refused or read into as many labels as its
// shape declares, and the header-only reader of StatVolume agrees on the
// shape.
func fuzzNPY(t testing.TB, data []byte) {
	ph, nx, ny, nz, err := ReadNPY(bytes.NewReader(data))
	hx, hy, hz, need, _, herr := npyDims(bytes.NewReader(data))
	if err != nil {
		return
	}
	if len(ph) != nx*ny*nz || nx < 1 || ny < 1 || nz < 1 {
		t.Errorf("read %d labels for shape %d×%d×%d", len(ph), nx, ny, nz)
	}
	if herr != nil || hx != nx || hy != ny || hz != nz {
		t.Errorf("header reader: %d×%d×%d (%v), full reader %d×%d×%d", hx, hy, hz, herr, nx, ny, nz)
	}
	if need > int64(len(data)) {
		t.Errorf("read a file of %d bytes whose header needs %d", len(data), need)
	}
}

func FuzzNPY(f *testing.F) {
	for _, s := range npySeeds(f) {
		f.Add(s)
	}
	f.Fuzz(func(t *testing.T, data []byte) { fuzzNPY(t, data) })
}

func vtiSeeds(t testing.TB) [][]byte {
	return append(smallVTISeeds(t), seedFiles(t, "volumes/gelspace-12.vti", "volumes/vtk-appended-base64.vti", "volumes/vtk-appended-raw.vti", "volumes/vtk-ascii.vti", "volumes/vtk-binary.vti")...)
}

// smallVTISeeds are 2×2×2 volumes: as WriteVTI writes them (appended
// raw), and ASCII and inline base64 ones with a particle array.
func smallVTISeeds(t testing.TB) [][]byte {
	g, err := NewGrid(2, 2, 2, 0.5)
	if err != nil {
		t.Fatal(err)
	}
	copy(g.Phase, []byte{1, 21, 23, 101, 110, 1, 2, 41})
	copy(g.Particle, []int32{0, 1, 1, 0, 0, 0, 0, 2})
	var b bytes.Buffer
	if err := WriteVTI(&b, g); err != nil {
		t.Fatal(err)
	}
	head := `<?xml version="1.0"?>
<VTKFile type="ImageData" version="0.1" byte_order="%s" header_type="%s">
<ImageData WholeExtent="0 2 0 2 0 2" Origin="0 0 0" Spacing="1 1 1"><Piece Extent="0 2 0 2 0 2"><CellData Scalars="phase">
%s
</CellData></Piece></ImageData></VTKFile>
`
	ascii := fmt.Sprintf(head, "LittleEndian", "UInt32", `<DataArray type="UInt8" Name="phase" format="ascii">1 21 23 101 110 1 2 41</DataArray>
<DataArray type="Int32" Name="particle" format="ascii">0 1 1 0 0 0 0 2</DataArray>`)
	// inline binary: base64 of a UInt32 byte count (8) and the 8 values
	bin := fmt.Sprintf(head, "LittleEndian", "UInt32", `<DataArray type="UInt8" Name="phase" format="binary">CAAAAAEVF2VuAQIp</DataArray>`)
	return [][]byte{b.Bytes(), []byte(ascii), []byte(bin)}
}

// fuzzVTI: a .vti file is refused or read into a grid whose arrays match
// its extent, with the extent StatVolume's header reader finds.
func fuzzVTI(t testing.TB, data []byte) {
	g, err := ReadVTI(bytes.NewReader(data))
	if err != nil {
		return
	}
	if n := g.NX * g.NY * g.NZ; len(g.Phase) != n || len(g.Particle) != n {
		t.Errorf("grid %d×%d×%d with %d phases and %d particles", g.NX, g.NY, g.NZ, len(g.Phase), len(g.Particle))
	}
	if !(g.VoxelUM > 0) || math.IsInf(g.VoxelUM, 0) {
		t.Errorf("accepted voxel size %g", g.VoxelUM)
	}
	if hx, hy, hz, err := vtiDims(data[:min(len(data), 1<<16)]); err == nil && (hx != g.NX || hy != g.NY || hz != g.NZ) {
		t.Errorf("header reader finds %d×%d×%d, full reader %d×%d×%d", hx, hy, hz, g.NX, g.NY, g.NZ)
	}
}

// vtiFindings are inputs the long fuzz run found accepted wrongly: an
// infinite spacing, and a second ImageData element that the full reader
// took while StatVolume's header reader took the first (so the memory
// check could be passed by a small box in front of a large one).
var vtiFindings = []string{
	"<VTKFile type=\"ImageData\"><ImageData WholeExtent=\"0 2 0 2 0 2\" Spacing=\"+Inf 1 1\"><Piece><CellData>" +
		"<DataArray type=\"UInt8\" Name=\"phase\" format=\"ascii\">1 1 1 1 1 1 1 1</DataArray></CellData></Piece></ImageData></VTKFile>",
	"<VTKFile type=\"ImageData\"><ImageData WholeExtent=\"0 12 0 12 0 12\"><Piece></Piece></ImageData>" +
		"<ImageData WholeExtent=\"0 2 0 2 0 2\"><Piece><CellData>" +
		"<DataArray type=\"UInt8\" Name=\"phase\" format=\"ascii\">1 1 1 1 1 1 1 1</DataArray></CellData></Piece></ImageData></VTKFile>",
}

func TestVTIFuzzFindings(t *testing.T) {
	for i, s := range vtiFindings {
		if _, err := ReadVTI(strings.NewReader(s)); err == nil {
			t.Errorf("finding %d accepted", i)
		}
	}
}

func FuzzVTI(f *testing.F) {
	for _, s := range vtiSeeds(f) {
		f.Add(s)
	}
	for _, s := range vtiFindings {
		f.Add([]byte(s))
	}
	f.Fuzz(func(t *testing.T, data []byte) { fuzzVTI(t, data) })
}

// TestFuzzLong runs each target's body on a million mutated inputs (the
// checkpoint's on 200 000; GELSPACE_FUZZ_N changes the count);
// GELSPACE_LONG=1 only.
func TestFuzzLong(t *testing.T) {
	if os.Getenv("GELSPACE_LONG") == "" {
		t.Skip("long: set GELSPACE_LONG=1")
	}
	n := fuzzmut.Execs(1_000_000)
	ckSeeds, ckSet := checkpointSeeds(t)
	for _, c := range []struct {
		name  string
		seeds [][]byte
		body  func(testing.TB, []byte)
		n     int
	}{
		{"PSDTable", psdLongSeeds(t), fuzzPSD, n},
		{"NPY", npySeeds(t), fuzzNPY, n},
		// the small seeds weighted tenfold: XML character data is slow
		// to decode, and the parser's paths are the same at 2³ as at 12³
		{"VTI", append(slices.Repeat(smallVTISeeds(t), 10), vtiSeeds(t)...), fuzzVTI, n},
		// a fifth of the count: each accepted input builds an engine
		{"Checkpoint", ckSeeds, func(t testing.TB, data []byte) { fuzzCheckpoint(t, ckSet, data) }, n / 5},
	} {
		t.Run(c.name, func(t *testing.T) {
			t.Parallel()
			fuzzmut.Run(t, 1, c.seeds, c.n, func(data []byte) { c.body(t, data) })
		})
	}
}

// TestFuzzSeedsRead: the small seeds are valid files, read to the
// labels they were made from, so that mutations start from inputs that
// reach deep into the readers.
func TestFuzzSeedsRead(t *testing.T) {
	want := []byte{1, 21, 23, 101, 110, 1, 2, 41}
	for i, s := range smallNPYSeeds() {
		ph, nx, ny, nz, err := ReadNPY(bytes.NewReader(s))
		if err != nil || nx*ny*nz != 8 {
			t.Fatalf("npy seed %d: %v", i, err)
		}
		got := append([]byte(nil), ph...)
		exp := append([]byte(nil), want...)
		if i == 1 { // booleans
			for k := range exp {
				exp[k] &= 1
			}
		}
		if i == 1 || i == 3 { // Fortran order: the same labels, reordered
			slices.Sort(got)
			slices.Sort(exp)
		}
		if !bytes.Equal(got, exp) {
			t.Errorf("npy seed %d: labels %v, want %v", i, got, exp)
		}
	}
	for i, s := range smallVTISeeds(t) {
		g, err := ReadVTI(bytes.NewReader(s))
		if err != nil {
			t.Fatalf("vti seed %d: %v", i, err)
		}
		if !bytes.Equal(g.Phase, want) {
			t.Errorf("vti seed %d: phases %v, want %v", i, g.Phase, want)
		}
	}
}

// checkpointSeeds are checkpoints of a 12³ paste (2 µm voxels) at 0 h and after 6 h,
// and their payloads alone (see fuzzCheckpoint).
func checkpointSeeds(t testing.TB) ([][]byte, EngineSettings) {
	g := enginePaste(t, 12, 2, 0.45, 3)
	set := EngineSettings{Params: kinetics.DefaultParams(), Thermal: kinetics.Thermal{TempC: 20}, Seed: 3}
	e, err := NewEngine(g, set)
	if err != nil {
		t.Fatal(err)
	}
	var out [][]byte
	for _, h := range []float64{0, 6} {
		if err := e.AdvanceTo(h); err != nil {
			t.Fatal(err)
		}
		var b bytes.Buffer
		if err := e.WriteCheckpoint(&b, &set, []byte("extra")); err != nil {
			t.Fatal(err)
		}
		out = append(out, b.Bytes(), b.Bytes()[len(checkpointMagic)+44:])
	}
	return out, set
}

// fuzzCheckpoint: a checkpoint is refused with an error wrapping
// ErrCheckpoint, or restores an engine on a grid of its dimensions. An
// input that does not start with the magic line is taken as a payload and
// given a valid header (checksum included), so that mutations reach the
// decoder and the restore, not only the checksum.
func fuzzCheckpoint(t testing.TB, set EngineSettings, data []byte) {
	if !bytes.HasPrefix(data, []byte(checkpointMagic)) {
		sum := sha256.Sum256(data)
		var h bytes.Buffer
		h.WriteString(checkpointMagic)
		binary.Write(&h, binary.BigEndian, uint32(checkpointVersion))
		h.Write(sum[:])
		binary.Write(&h, binary.BigEndian, uint64(len(data)))
		data = append(h.Bytes(), data...)
	}
	e, extra, err := ReadCheckpoint(bytes.NewReader(data), set)
	if err != nil {
		if !errors.Is(err, ErrCheckpoint) && e != nil {
			t.Errorf("error %v with an engine", err)
		}
		return
	}
	g := e.Grid()
	if n := g.NX * g.NY * g.NZ; len(g.Phase) != n || len(g.Particle) != n {
		t.Errorf("restored grid %d×%d×%d with %d phases", g.NX, g.NY, g.NZ, len(g.Phase))
	}
	_ = extra
}

func FuzzCheckpoint(f *testing.F) {
	seeds, set := checkpointSeeds(f)
	for _, s := range seeds {
		f.Add(s)
	}
	f.Fuzz(func(t *testing.T, data []byte) { fuzzCheckpoint(t, set, data) })
}
