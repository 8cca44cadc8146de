package voxel

import (
	"bytes"
	"encoding/base64"
	"encoding/binary"
	"fmt"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

func smallGrid(t *testing.T) *Grid {
	g, err := NewGrid(5, 4, 3, 0.5)
	if err != nil {
		t.Fatal(err)
	}
	for i := range g.Phase {
		g.Phase[i] = uint8((i * 7) % 37)
		g.Particle[i] = int32(i*i) - 3 + 3
	}
	return g
}

func sameGrid(t *testing.T, a, b *Grid, particles bool) {
	t.Helper()
	if a.NX != b.NX || a.NY != b.NY || a.NZ != b.NZ || a.VoxelUM != b.VoxelUM {
		t.Fatalf("dims %d×%d×%d @%g vs %d×%d×%d @%g", a.NX, a.NY, a.NZ, a.VoxelUM, b.NX, b.NY, b.NZ, b.VoxelUM)
	}
	if !bytes.Equal(a.Phase, b.Phase) {
		t.Fatal("phase arrays differ")
	}
	if particles {
		for i := range a.Particle {
			if a.Particle[i] != b.Particle[i] {
				t.Fatalf("particle %d: %d vs %d", i, a.Particle[i], b.Particle[i])
			}
		}
	}
}

func TestVTIRoundTrip(t *testing.T) {
	g := smallGrid(t)
	var buf bytes.Buffer
	if err := WriteVTI(&buf, g); err != nil {
		t.Fatal(err)
	}
	if !strings.Contains(buf.String()[:600], `Spacing="0.5 0.5 0.5"`) {
		t.Fatal("spacing missing")
	}
	h, err := ReadVTI(bytes.NewReader(buf.Bytes()))
	if err != nil {
		t.Fatal(err)
	}
	sameGrid(t, g, h, true)
}

func TestVTIVariants(t *testing.T) {
	// Files as other writers save them: inline base64 with UInt32 headers
	// and an Int16 phase array, big endian; and inline ascii.
	g := smallGrid(t)
	n := g.Len()
	body := make([]byte, 4+2*n)
	binary.BigEndian.PutUint32(body, uint32(2*n))
	for i, p := range g.Phase {
		binary.BigEndian.PutUint16(body[4+2*i:], uint16(p))
	}
	hdr := base64.StdEncoding.EncodeToString(body[:4]) + base64.StdEncoding.EncodeToString(body[4:])
	doc := fmt.Sprintf(`<?xml version="1.0"?>
<VTKFile type="ImageData" version="0.1" byte_order="BigEndian">
<ImageData WholeExtent="0 5 0 4 0 3" Origin="0 0 0" Spacing="0.5 0.5 0.5">
<Piece Extent="0 5 0 4 0 3"><CellData>
<DataArray type="Int16" Name="phase" format="binary">%s</DataArray>
</CellData></Piece></ImageData></VTKFile>`, hdr)
	h, err := ReadVTI(strings.NewReader(doc))
	if err != nil {
		t.Fatal(err)
	}
	sameGrid(t, g, h, false)
	var sb strings.Builder
	for _, p := range g.Phase {
		fmt.Fprintf(&sb, "%d ", p)
	}
	doc = fmt.Sprintf(`<VTKFile type="ImageData" byte_order="LittleEndian">
<ImageData WholeExtent="0 5 0 4 0 3" Spacing="0.5 0.5 0.5"><Piece Extent="0 5 0 4 0 3"><CellData>
<DataArray type="UInt8" Name="phase" format="ascii">%s</DataArray></CellData></Piece></ImageData></VTKFile>`, sb.String())
	if h, err = ReadVTI(strings.NewReader(doc)); err != nil {
		t.Fatal(err)
	}
	sameGrid(t, g, h, false)
	// Errors: compressed, no phase array.
	if _, err := ReadVTI(strings.NewReader(strings.Replace(doc, `byte_order="LittleEndian"`, `compressor="vtkZLibDataCompressor"`, 1))); err == nil {
		t.Fatal("compressed file accepted")
	}
	if _, err := ReadVTI(strings.NewReader(strings.Replace(doc, `Name="phase"`, `Name="other"`, 1))); err == nil {
		t.Fatal("file without phase accepted")
	}
}

// npyFile builds an .npy file by hand as NumPy writes it.
func npyFile(descr string, fortran bool, shape string, data []byte) []byte {
	f := "False"
	if fortran {
		f = "True"
	}
	dict := fmt.Sprintf("{'descr': '%s', 'fortran_order': %s, 'shape': %s, }", descr, f, shape)
	pad := (64 - (10+len(dict)+1)%64) % 64
	h := dict + strings.Repeat(" ", pad) + "\n"
	out := []byte("\x93NUMPY\x01\x00")
	out = binary.LittleEndian.AppendUint16(out, uint16(len(h)))
	out = append(out, h...)
	return append(out, data...)
}

func TestNPYRoundTrip(t *testing.T) {
	g := smallGrid(t)
	var buf bytes.Buffer
	if err := WriteNPY(&buf, g); err != nil {
		t.Fatal(err)
	}
	if (buf.Len()-g.Len())%64 != 0 {
		t.Fatalf("header length %d not a multiple of 64", buf.Len()-g.Len())
	}
	if !bytes.Contains(buf.Bytes()[:128], []byte("'shape': (3, 4, 5)")) {
		t.Fatal("shape is not (z, y, x)")
	}
	ph, nx, ny, nz, err := ReadNPY(&buf)
	if err != nil {
		t.Fatal(err)
	}
	if nx != 5 || ny != 4 || nz != 3 || !bytes.Equal(ph, g.Phase) {
		t.Fatalf("round trip: %d %d %d", nx, ny, nz)
	}
}

func TestNPYDtypes(t *testing.T) {
	g := smallGrid(t)
	n := g.Len()
	enc := func(size int, bo binary.ByteOrder, fortran bool) []byte {
		out := make([]byte, size*n)
		for z := 0; z < 3; z++ {
			for y := 0; y < 4; y++ {
				for x := 0; x < 5; x++ {
					v := g.Phase[g.Index(x, y, z)]
					k := x + 5*(y+4*z)
					if fortran {
						k = z + 3*(y+4*x)
					}
					b := out[k*size:]
					switch size {
					case 1:
						b[0] = v
					case 2:
						bo.PutUint16(b, uint16(v))
					case 4:
						bo.PutUint32(b, uint32(v))
					case 8:
						bo.PutUint64(b, uint64(v))
					}
				}
			}
		}
		return out
	}
	for _, c := range []struct {
		descr   string
		size    int
		bo      binary.ByteOrder
		fortran bool
	}{
		{"|u1", 1, binary.LittleEndian, true},
		{"|i1", 1, binary.LittleEndian, false},
		{"<i8", 8, binary.LittleEndian, false},
		{">i8", 8, binary.BigEndian, true},
		{">u2", 2, binary.BigEndian, false},
		{"<i4", 4, binary.LittleEndian, true},
		{"<u4", 4, binary.LittleEndian, false},
	} {
		file := npyFile(c.descr, c.fortran, "(3, 4, 5)", enc(c.size, c.bo, c.fortran))
		ph, nx, ny, nz, err := ReadNPY(bytes.NewReader(file))
		if err != nil {
			t.Fatalf("%s fortran=%v: %v", c.descr, c.fortran, err)
		}
		if nx != 5 || ny != 4 || nz != 3 || !bytes.Equal(ph, g.Phase) {
			t.Fatalf("%s fortran=%v: values differ", c.descr, c.fortran)
		}
	}
	for _, bad := range [][]byte{
		npyFile("<f8", false, "(1, 1, 2)", make([]byte, 16)),
		npyFile("<i2", false, "(1, 1, 1)", []byte{0x00, 0x01}), // 256
		npyFile("|u1", false, "(2, 2)", make([]byte, 4)),
		npyFile("|u1", false, "(2, 2, 2)", make([]byte, 5)),
		[]byte("not numpy at all"),
	} {
		if _, _, _, _, err := ReadNPY(bytes.NewReader(bad)); err == nil {
			t.Fatalf("bad file accepted: %q", bad[:min(len(bad), 60)])
		}
	}
}

func TestReadVolume(t *testing.T) {
	g := smallGrid(t)
	dir := t.TempDir()
	for _, name := range []string{"a.vti", "a.npy"} {
		f, err := os.Create(filepath.Join(dir, name))
		if err != nil {
			t.Fatal(err)
		}
		if strings.HasSuffix(name, "vti") {
			err = WriteVTI(f, g)
		} else {
			err = WriteNPY(f, g)
		}
		if err != nil {
			t.Fatal(err)
		}
		f.Close()
		h, err := ReadVolume(filepath.Join(dir, name))
		if err != nil {
			t.Fatal(err)
		}
		if !bytes.Equal(h.Phase, g.Phase) || h.NX != 5 || h.NZ != 3 {
			t.Fatalf("%s: read back differs", name)
		}
	}
	os.WriteFile(filepath.Join(dir, "a.raw"), []byte{1}, 0o644)
	if _, err := ReadVolume(filepath.Join(dir, "a.raw")); err == nil {
		t.Fatal(".raw accepted")
	}
}

func TestForeignVolumes(t *testing.T) {
	// Files written by VTK 9.1 (vtkXMLImageDataWriter, after reading
	// gelspace's own file with vtkXMLImageDataReader) and by numpy.save:
	// see testdata/volumes/README.md. Each must read back to the box
	// gelspace wrote.
	dir := filepath.Join("..", "testdata", "volumes")
	ref, err := ReadVolume(filepath.Join(dir, "gelspace-12.vti"))
	if err != nil {
		t.Fatal(err)
	}
	npy, err := ReadVolume(filepath.Join(dir, "gelspace-12.npy"))
	if err != nil {
		t.Fatal(err)
	}
	if !bytes.Equal(ref.Phase, npy.Phase) {
		t.Fatal("gelspace's vti and npy differ")
	}
	for _, name := range []string{"vtk-binary.vti", "vtk-appended-raw.vti", "vtk-appended-base64.vti", "vtk-ascii.vti",
		"numpy-fortran-be-i8.npy", "numpy-le-i4.npy", "numpy-u2.npy"} {
		g, err := ReadVolume(filepath.Join(dir, name))
		if err != nil {
			t.Errorf("%s: %v", name, err)
			continue
		}
		sameGrid(t, &Grid{NX: ref.NX, NY: ref.NY, NZ: ref.NZ, VoxelUM: g.VoxelUM, Phase: ref.Phase}, g, false)
		if strings.HasSuffix(name, ".vti") {
			sameGrid(t, ref, g, true)
		}
	}
}

func FuzzReadVolume(f *testing.F) {
	// Seeded from the fixtures and the hand-made files: no panics, and
	// anything accepted has consistent dimensions.
	for _, name := range []string{"gelspace-12.vti", "vtk-binary.vti", "vtk-ascii.vti", "vtk-appended-base64.vti", "gelspace-12.npy", "numpy-u2.npy"} {
		data, err := os.ReadFile(filepath.Join("..", "testdata", "volumes", name))
		if err != nil {
			f.Fatal(err)
		}
		f.Add(data)
	}
	f.Add(npyFile("|u1", true, "(1, 2, 3)", []byte{1, 2, 3, 4, 5, 6}))
	f.Fuzz(func(t *testing.T, data []byte) {
		if g, err := ReadVTI(bytes.NewReader(data)); err == nil {
			if len(g.Phase) != g.NX*g.NY*g.NZ || len(g.Particle) != len(g.Phase) {
				t.Fatalf("vti: %d×%d×%d with %d voxels", g.NX, g.NY, g.NZ, len(g.Phase))
			}
		}
		if ph, nx, ny, nz, err := ReadNPY(bytes.NewReader(data)); err == nil && len(ph) != nx*ny*nz {
			t.Fatalf("npy: %d×%d×%d with %d values", nx, ny, nz, len(ph))
		}
	})
}

func TestHugeShapes(t *testing.T) {
	// Shapes whose product overflows int64 are refused, not looped over.
	for _, shape := range []string{"(1099511627776, 1099511627776, 1099511627776)", "(4294967296, 4294967296, 1)", "(2, 3, 0)"} {
		if _, _, _, _, err := ReadNPY(bytes.NewReader(npyFile("|u1", true, shape, []byte{1, 2}))); err == nil {
			t.Errorf("shape %s accepted", shape)
		}
	}
	doc := `<VTKFile type="ImageData"><ImageData WholeExtent="0 4294967296 0 4294967296 0 4294967296"><Piece Extent=""><CellData>
<DataArray type="UInt8" Name="phase" format="ascii">1 2</DataArray></CellData></Piece></ImageData></VTKFile>`
	if _, err := ReadVTI(strings.NewReader(doc)); err == nil {
		t.Error("huge extent accepted")
	}
}

func TestASCIIValueOutsideType(t *testing.T) {
	// A value that does not fit the declared type is refused, not wrapped
	// onto another label (300 would become 44 in a byte).
	for _, v := range []string{"300", "-1", "256"} {
		doc := `<VTKFile type="ImageData"><ImageData WholeExtent="0 2 0 1 0 1"><Piece Extent="0 2 0 1 0 1"><CellData>
<DataArray type="UInt8" Name="phase" format="ascii">1 ` + v + `</DataArray></CellData></Piece></ImageData></VTKFile>`
		_, err := ReadVTI(strings.NewReader(doc))
		if err == nil || !strings.Contains(err.Error(), "does not fit") {
			t.Errorf("UInt8 value %s: error %v; want a refusal", v, err)
		}
	}
	doc := `<VTKFile type="ImageData"><ImageData WholeExtent="0 2 0 1 0 1"><Piece Extent="0 2 0 1 0 1"><CellData>
<DataArray type="Int16" Name="phase" format="ascii">1 101</DataArray></CellData></Piece></ImageData></VTKFile>`
	if g, err := ReadVTI(strings.NewReader(doc)); err != nil || g.Phase[1] != 101 {
		t.Errorf("Int16 ascii: %v", err)
	}
}

func TestTruncatedNPYCount(t *testing.T) {
	// The message counts the values actually present.
	data := npyFile("<u2", false, "(2, 3, 4)", make([]byte, 2*7+1))
	_, _, _, _, err := ReadNPY(bytes.NewReader(data))
	if err == nil || !strings.Contains(err.Error(), "after 7 of the 24 values") {
		t.Errorf("error %v; want it to count 7 of 24 values", err)
	}
}

func TestStatVolume(t *testing.T) {
	dir := filepath.Join("..", "testdata", "volumes")
	for _, name := range []string{"gelspace-12.vti", "vtk-ascii.vti", "vtk-appended-raw.vti", "gelspace-12.npy", "numpy-fortran-be-i8.npy"} {
		nx, ny, nz, err := StatVolume(filepath.Join(dir, name))
		if err != nil || nx != 12 || ny != 12 || nz != 12 {
			t.Errorf("%s: %d×%d×%d, %v; want 12³", name, nx, ny, nz, err)
		}
	}
	tmp := t.TempDir()
	// A header that claims far more data than the file holds.
	short := filepath.Join(tmp, "short.npy")
	os.WriteFile(short, npyFile("|u1", false, "(1024, 1024, 1024)", []byte{1, 2, 3}), 0o644)
	if _, _, _, err := StatVolume(short); err == nil || !strings.Contains(err.Error(), "declares") {
		t.Errorf("short npy: %v; want a refusal naming what the header declares", err)
	}
	// A device is not a volume file.
	if _, err := os.Stat("/dev/zero"); err == nil {
		dev := filepath.Join(tmp, "zero.vti")
		if os.Symlink("/dev/zero", dev) == nil {
			if _, err := ReadVolume(dev); err == nil || !strings.Contains(err.Error(), "not a regular file") {
				t.Errorf("/dev/zero as a volume: %v", err)
			}
			if _, _, _, err := StatVolume(dev); err == nil {
				t.Error("/dev/zero stat accepted")
			}
		}
	}
}
