package voxel

import (
	"bufio"
	"bytes"
	"encoding/base64"
	"encoding/binary"
	"encoding/xml"
	"errors"
	"fmt"
	"io"
	"math"
	"os"
	"path/filepath"
	"strconv"
	"strings"

	"gelspace/kinetics"
)

// WriteVTI writes g as VTK XML ImageData: cell arrays "phase" (UInt8) and
// "particle" (Int32), origin 0, spacing the voxel edge in µm, data
// appended raw after the XML header (little endian, UInt64 block sizes),
// which ParaView reads directly.
func WriteVTI(w io.Writer, g *Grid) error {
	n := g.Len()
	if len(g.Phase) != n || len(g.Particle) != n {
		panic("voxel: WriteVTI: grid arrays do not match its dimensions")
	}
	bw := bufio.NewWriterSize(w, 1<<16)
	ext := fmt.Sprintf("0 %d 0 %d 0 %d", g.NX, g.NY, g.NZ)
	sp := strconv.FormatFloat(g.VoxelUM, 'g', -1, 64)
	fmt.Fprintf(bw, `<?xml version="1.0"?>
<VTKFile type="ImageData" version="1.0" byte_order="LittleEndian" header_type="UInt64">
  <ImageData WholeExtent="%s" Origin="0 0 0" Spacing="%s %s %s">
    <Piece Extent="%s">
      <CellData Scalars="phase">
        <DataArray type="UInt8" Name="phase" NumberOfComponents="1" format="appended" offset="0"/>
        <DataArray type="Int32" Name="particle" NumberOfComponents="1" format="appended" offset="%d"/>
      </CellData>
    </Piece>
  </ImageData>
  <AppendedData encoding="raw">
   _`, ext, sp, sp, sp, ext, 8+n)
	var hdr [8]byte
	binary.LittleEndian.PutUint64(hdr[:], uint64(n))
	bw.Write(hdr[:])
	bw.Write(g.Phase)
	binary.LittleEndian.PutUint64(hdr[:], uint64(4*n))
	bw.Write(hdr[:])
	var buf [4096]byte
	for i := 0; i < n; i += len(buf) / 4 {
		m := min(len(buf)/4, n-i)
		for k := 0; k < m; k++ {
			binary.LittleEndian.PutUint32(buf[4*k:], uint32(g.Particle[i+k]))
		}
		bw.Write(buf[:4*m])
	}
	bw.WriteString("\n  </AppendedData>\n</VTKFile>\n")
	return bw.Flush()
}

// vtiHead is the part of a .vti file that ReadVTI understands.
type vtiHead struct {
	Type       string `xml:"type,attr"`
	ByteOrder  string `xml:"byte_order,attr"`
	HeaderType string `xml:"header_type,attr"`
	Compressor string `xml:"compressor,attr"`
	Image      struct {
		WholeExtent string `xml:"WholeExtent,attr"`
		Origin      string `xml:"Origin,attr"`
		Spacing     string `xml:"Spacing,attr"`
		Piece       []struct {
			Extent string `xml:"Extent,attr"`
			Cell   struct {
				Arrays []vtiArray `xml:"DataArray"`
			} `xml:"CellData"`
		} `xml:"Piece"`
	} `xml:"ImageData"`
	Appended struct {
		Encoding string `xml:"encoding,attr"`
	} `xml:"AppendedData"`
}

type vtiArray struct {
	Type   string `xml:"type,attr"`
	Name   string `xml:"Name,attr"`
	Format string `xml:"format,attr"`
	Offset int64  `xml:"offset,attr"`
	Comps  string `xml:"NumberOfComponents,attr"`
	Text   string `xml:",chardata"`
}

// ReadVTI reads VTK XML ImageData with a "phase" cell array of an integer
// type whose values fit 0–255 (and an optional "particle" cell array):
// one piece; data inline ascii or base64, or appended raw or base64;
// either byte order; UInt32 or UInt64 block headers; not compressed.
// VoxelUM comes from the spacing, which must be the same on all axes.
func ReadVTI(r io.Reader) (*Grid, error) {
	data, err := io.ReadAll(r)
	if err != nil {
		return nil, err
	}
	head := data
	var appended []byte
	if k := bytes.Index(data, []byte("<AppendedData")); k >= 0 {
		rest := data[k:]
		u := bytes.IndexByte(rest, '_')
		if u < 0 {
			return nil, errors.New("vti: AppendedData without the '_' marker")
		}
		appended = rest[u+1:]
		head = append(append([]byte(nil), data[:k]...), rest[:bytes.IndexByte(rest, '>')+1]...)
		head = append(head, "</AppendedData></VTKFile>"...)
	}
	// One ImageData element: the header reader of StatVolume (vtiDims)
	// takes the first, so a second could slip a larger box past it.
	if n := bytes.Count(head, []byte("<ImageData")); n != 1 {
		return nil, fmt.Errorf("vti: %d ImageData elements: need exactly one", n)
	}
	var h vtiHead
	if err := xml.Unmarshal(head, &h); err != nil {
		return nil, fmt.Errorf("vti: %v", err)
	}
	if h.Type != "ImageData" {
		return nil, fmt.Errorf("vti: file type %q: only ImageData is read", excerpt(h.Type))
	}
	if h.Compressor != "" {
		return nil, fmt.Errorf("vti: compressed data (%s) is not read: save uncompressed", h.Compressor)
	}
	var bo binary.ByteOrder = binary.LittleEndian
	if h.ByteOrder == "BigEndian" {
		bo = binary.BigEndian
	}
	hdr64 := h.HeaderType == "UInt64"
	if len(h.Image.Piece) != 1 {
		return nil, fmt.Errorf("vti: %d pieces: only single-piece files are read", len(h.Image.Piece))
	}
	ext, err := parseInts(h.Image.WholeExtent, 6)
	if err != nil {
		return nil, fmt.Errorf("vti: WholeExtent %q: %v", excerpt(h.Image.WholeExtent), err)
	}
	nx, ny, nz := ext[1]-ext[0], ext[3]-ext[2], ext[5]-ext[4]
	spacing := 1.0
	if h.Image.Spacing != "" {
		f := strings.Fields(h.Image.Spacing)
		if len(f) != 3 {
			return nil, fmt.Errorf("vti: Spacing %q: need 3 numbers", excerpt(h.Image.Spacing))
		}
		var s [3]float64
		for i := range f {
			if s[i], err = strconv.ParseFloat(f[i], 64); err != nil || !(s[i] > 0) || math.IsInf(s[i], 0) {
				return nil, fmt.Errorf("vti: Spacing %q: need positive finite numbers", excerpt(h.Image.Spacing))
			}
		}
		if math.Abs(s[1]-s[0]) > 1e-9*s[0] || math.Abs(s[2]-s[0]) > 1e-9*s[0] {
			return nil, fmt.Errorf("vti: Spacing %q: voxels must be cubes", excerpt(h.Image.Spacing))
		}
		spacing = s[0]
	}
	if !dimsOK(nx, ny, nz) {
		return nil, fmt.Errorf("vti: WholeExtent %q: each axis must hold ≥ 1 cell and the total at most %d", excerpt(h.Image.WholeExtent), int64(MaxVoxels))
	}
	n := nx * ny * nz
	// Decode the arrays first: the grid is allocated only once the file
	// is known to hold its data.
	type decoded struct {
		name   string
		raw    []byte
		size   int
		signed bool
	}
	var arrays []decoded
	for _, a := range h.Image.Piece[0].Cell.Arrays {
		if a.Name != "phase" && a.Name != "particle" {
			continue
		}
		if a.Comps != "" && a.Comps != "1" {
			return nil, fmt.Errorf("vti: array %q has %s components, want 1", excerpt(a.Name), a.Comps)
		}
		size, ok := intSizes[a.Type]
		if !ok {
			return nil, fmt.Errorf("vti: array %q of type %q: need an integer type", excerpt(a.Name), excerpt(a.Type))
		}
		var raw []byte
		switch a.Format {
		case "appended":
			if appended == nil {
				return nil, fmt.Errorf("vti: array %q is appended but the file has no AppendedData", excerpt(a.Name))
			}
			if a.Offset < 0 || a.Offset > int64(len(appended)) {
				return nil, fmt.Errorf("vti: array %q: offset %d outside the appended data", excerpt(a.Name), a.Offset)
			}
			src := appended[a.Offset:]
			if h.Appended.Encoding == "base64" {
				raw, err = decodeBase64Block(src, hdr64, bo, true)
			} else {
				raw, err = rawBlock(src, hdr64, bo)
			}
		case "binary":
			raw, err = decodeBase64Block([]byte(strings.TrimSpace(a.Text)), hdr64, bo, false)
		case "ascii":
			raw, err = asciiToBytes(a.Text, a.Type, size, bo)
		default:
			return nil, fmt.Errorf("vti: array %q: format %q not read", excerpt(a.Name), excerpt(a.Format))
		}
		if err != nil {
			return nil, fmt.Errorf("vti: array %q: %v", excerpt(a.Name), err)
		}
		if len(raw) < n*size {
			return nil, fmt.Errorf("vti: array %q: %d bytes, need %d for %d cells", excerpt(a.Name), len(raw), n*size, n)
		}
		arrays = append(arrays, decoded{a.Name, raw, size, a.Type[0] == 'I'})
	}
	g, err := NewGrid(nx, ny, nz, spacing)
	if err != nil {
		return nil, fmt.Errorf("vti: %v", err)
	}
	foundPhase := false
	for _, a := range arrays {
		raw, size, signed := a.raw, a.size, a.signed
		for i := 0; i < n; i++ {
			v := readInt(raw[i*size:], size, signed, bo)
			if a.name == "phase" {
				if v < 0 || v > 255 {
					return nil, fmt.Errorf("vti: phase %d at cell %d: must be between 0 and 255", v, i)
				}
				g.Phase[i] = kinetics.ID(v)
			} else {
				if v < 0 || v > math.MaxInt32 {
					return nil, fmt.Errorf("vti: particle %d at cell %d: must be between 0 and %d", v, i, math.MaxInt32)
				}
				g.Particle[i] = int32(v)
			}
		}
		if a.name == "phase" {
			foundPhase = true
		}
	}
	if !foundPhase {
		return nil, errors.New(`vti: no "phase" cell array`)
	}
	return g, nil
}

// dimsOK reports whether a box of nx×ny×nz cells is allowed: each edge
// ≥ 1 and the total at most MaxVoxels, without overflow.
func dimsOK(nx, ny, nz int) bool {
	if nx < 1 || ny < 1 || nz < 1 || nx > MaxVoxels || ny > MaxVoxels || nz > MaxVoxels {
		return false
	}
	return int64(nx)*int64(ny) <= MaxVoxels && int64(nx)*int64(ny)*int64(nz) <= MaxVoxels
}

var intSizes = map[string]int{"Int8": 1, "UInt8": 1, "Int16": 2, "UInt16": 2, "Int32": 4, "UInt32": 4, "Int64": 8, "UInt64": 8}

// intRange returns the smallest and largest value of a VTK integer type of
// the given size in bytes; hi is −1 for UInt64, whose range exceeds int64.
func intRange(typ string, size int) (lo, hi int64) {
	bits := 8 * uint(size)
	if strings.HasPrefix(typ, "UInt") {
		if bits == 64 {
			return 0, -1
		}
		return 0, 1<<bits - 1
	}
	if bits == 64 {
		return math.MinInt64, math.MaxInt64
	}
	return -(1 << (bits - 1)), 1<<(bits-1) - 1
}

func readInt(b []byte, size int, signed bool, bo binary.ByteOrder) int64 {
	switch size {
	case 1:
		if signed {
			return int64(int8(b[0]))
		}
		return int64(b[0])
	case 2:
		if signed {
			return int64(int16(bo.Uint16(b)))
		}
		return int64(bo.Uint16(b))
	case 4:
		if signed {
			return int64(int32(bo.Uint32(b)))
		}
		return int64(bo.Uint32(b))
	default:
		u := bo.Uint64(b)
		if !signed && u > math.MaxInt64 {
			return -1
		}
		return int64(u)
	}
}

func parseInts(s string, n int) ([]int, error) {
	f := strings.Fields(s)
	if len(f) != n {
		return nil, fmt.Errorf("need %d integers", n)
	}
	out := make([]int, n)
	for i := range f {
		v, err := strconv.Atoi(f[i])
		if err != nil {
			return nil, fmt.Errorf("need %d integers", n)
		}
		out[i] = v
	}
	return out, nil
}

func rawBlock(src []byte, hdr64 bool, bo binary.ByteOrder) ([]byte, error) {
	hs := 4
	if hdr64 {
		hs = 8
	}
	if len(src) < hs {
		return nil, errors.New("truncated block header")
	}
	var size uint64
	if hdr64 {
		size = bo.Uint64(src)
	} else {
		size = uint64(bo.Uint32(src))
	}
	if size > uint64(len(src)-hs) {
		return nil, fmt.Errorf("block of %d bytes, only %d in the file", size, len(src)-hs)
	}
	return src[hs : hs+int(size)], nil
}

// decodeBase64Block decodes one base64 block of a VTK file: a header
// holding the byte count, then the data. VTK writers encode the two either
// as one base64 stream or as two (header, then data); both are read. When
// appended, src runs on past the block: the header gives its length.
func decodeBase64Block(src []byte, hdr64 bool, bo binary.ByteOrder, appended bool) ([]byte, error) {
	hs := 4
	if hdr64 {
		hs = 8
	}
	if !appended {
		src = bytes.Join(bytes.Fields(src), nil)
	}
	enc := base64.StdEncoding
	// The first hs bytes decode the same way under both layouts.
	first := (hs + 2) / 3 * 4
	if len(src) < first {
		return nil, errors.New("truncated base64 header")
	}
	hb, err := enc.DecodeString(string(src[:first]))
	if err != nil || len(hb) < hs {
		return nil, errors.New("bad base64 header")
	}
	var size uint64
	if hdr64 {
		size = bo.Uint64(hb)
	} else {
		size = uint64(bo.Uint32(hb))
	}
	if size > uint64(len(src)) {
		return nil, fmt.Errorf("block of %d bytes, the file is shorter", size)
	}
	n := int(size)
	// one stream: header and data together
	if k := enc.EncodedLen(hs + n); k <= len(src) {
		if out, err := enc.DecodeString(string(src[:k])); err == nil && len(out) >= hs+n {
			return out[hs : hs+n], nil
		}
	}
	// two streams
	h := enc.EncodedLen(hs)
	k := enc.EncodedLen(n)
	if h+k > len(src) {
		return nil, fmt.Errorf("block of %d bytes, the file is shorter", size)
	}
	out, err := enc.DecodeString(string(src[h : h+k]))
	if err != nil {
		return nil, fmt.Errorf("bad base64 data: %v", err)
	}
	return out[:n], nil
}

func asciiToBytes(text, typ string, size int, bo binary.ByteOrder) ([]byte, error) {
	f := strings.Fields(text)
	out := make([]byte, len(f)*size)
	for i, s := range f {
		v, err := strconv.ParseInt(s, 10, 64)
		if err != nil {
			return nil, fmt.Errorf("ascii value %q: need an integer", excerpt(s))
		}
		if lo, hi := intRange(typ, size); v < lo || (hi >= 0 && v > hi) {
			return nil, fmt.Errorf("ascii value %d at position %d does not fit the array type %s", v, i, typ)
		}
		b := out[i*size:]
		switch size {
		case 1:
			b[0] = byte(v)
		case 2:
			bo.PutUint16(b, uint16(v))
		case 4:
			bo.PutUint32(b, uint32(v))
		default:
			bo.PutUint64(b, uint64(v))
		}
	}
	return out, nil
}

// WriteNPY writes the phase array of g as a NumPy .npy file, format 1.0,
// dtype uint8, C order, shape (NZ, NY, NX).
func WriteNPY(w io.Writer, g *Grid) error {
	if len(g.Phase) != g.Len() {
		panic("voxel: WriteNPY: phase array does not match the grid dimensions")
	}
	dict := fmt.Sprintf("{'descr': '|u1', 'fortran_order': False, 'shape': (%d, %d, %d), }", g.NZ, g.NY, g.NX)
	// magic (6) + version (2) + length (2) + dict + padding + '\n' ≡ 0 mod 64
	total := 10 + len(dict) + 1
	pad := (64 - total%64) % 64
	hdr := dict + strings.Repeat(" ", pad) + "\n"
	bw := bufio.NewWriterSize(w, 1<<16)
	bw.WriteString("\x93NUMPY\x01\x00")
	var l [2]byte
	binary.LittleEndian.PutUint16(l[:], uint16(len(hdr)))
	bw.Write(l[:])
	bw.WriteString(hdr)
	bw.Write(g.Phase)
	return bw.Flush()
}

// ReadNPY reads a 3D NumPy array of phase labels: any integer or boolean
// dtype of either byte order whose values fit 0–255, C or Fortran order,
// format 1.0, 2.0 or 3.0. It returns the labels in gelspace order (x
// fastest, shape read as (z, y, x)) and the dimensions.
func ReadNPY(r io.Reader) (phase []uint8, nx, ny, nz int, err error) {
	br := bufio.NewReader(r)
	h, err := readNPYHeader(br)
	if err != nil {
		return nil, 0, 0, 0, err
	}
	nx, ny, nz = h.nx, h.ny, h.nz
	size, kind, bo, fortran := h.size, h.kind, h.bo, h.fortran
	n := nx * ny * nz
	// grow with the data so that a short file cannot make us allocate the
	// size its header claims
	phase = make([]uint8, 0, min(n, 1<<20))
	buf := make([]byte, min(1<<16-(1<<16)%size, n*size))
	for i := 0; i < n; {
		m := min(len(buf)/size, n-i)
		if got, err := io.ReadFull(br, buf[:m*size]); err != nil {
			return nil, 0, 0, 0, fmt.Errorf("npy: data ends after %d of the %d values the header declares", i+got/size, n)
		}
		for k := 0; k < m; k++ {
			v := readInt(buf[k*size:], size, kind == 'i', bo)
			if v < 0 || v > 255 {
				return nil, 0, 0, 0, fmt.Errorf("npy: value %d at element %d: labels must be between 0 and 255", v, i+k)
			}
			phase = append(phase, uint8(v))
		}
		i += m
	}
	if fortran {
		// element (z, y, x) sits at z + nz*(y + ny*x) in Fortran order
		c := make([]uint8, n)
		for z := 0; z < nz; z++ {
			for y := 0; y < ny; y++ {
				for x := 0; x < nx; x++ {
					c[x+nx*(y+ny*z)] = phase[z+nz*(y+ny*x)]
				}
			}
		}
		phase = c
	}
	return phase, nx, ny, nz, nil
}

// npyHead is what an .npy header declares.
type npyHead struct {
	nx, ny, nz  int
	size        int  // bytes per value
	kind        byte // 'u', 'i' or 'b'
	bo          binary.ByteOrder
	fortran     bool
	headerBytes int64 // magic, version, length and dict
}

// readNPYHeader reads the magic, version and header dict of an .npy file.
func readNPYHeader(br io.Reader) (npyHead, error) {
	var pre [8]byte
	if _, err := io.ReadFull(br, pre[:]); err != nil {
		return npyHead{}, fmt.Errorf("npy: %v", err)
	}
	if string(pre[:6]) != "\x93NUMPY" {
		return npyHead{}, errors.New("npy: not a NumPy file (bad magic)")
	}
	var hlen, hlenSize int
	switch pre[6] {
	case 1:
		var b [2]byte
		if _, err := io.ReadFull(br, b[:]); err != nil {
			return npyHead{}, fmt.Errorf("npy: %v", err)
		}
		hlen, hlenSize = int(binary.LittleEndian.Uint16(b[:])), 2
	case 2, 3:
		var b [4]byte
		if _, err := io.ReadFull(br, b[:]); err != nil {
			return npyHead{}, fmt.Errorf("npy: %v", err)
		}
		hlen, hlenSize = int(binary.LittleEndian.Uint32(b[:])), 4
	default:
		return npyHead{}, fmt.Errorf("npy: format version %d.%d not read (1.0 to 3.0 are)", pre[6], pre[7])
	}
	if hlen > 1<<20 {
		return npyHead{}, fmt.Errorf("npy: header of %d bytes is too long", hlen)
	}
	hb := make([]byte, hlen)
	if _, err := io.ReadFull(br, hb); err != nil {
		return npyHead{}, fmt.Errorf("npy: header: %v", err)
	}
	descr, fortran, shape, err := parseNPYHeader(string(hb))
	if err != nil {
		return npyHead{}, err
	}
	h := npyHead{fortran: fortran, headerBytes: int64(len(pre) + hlenSize + hlen)}
	if len(shape) != 3 {
		return npyHead{}, fmt.Errorf("npy: shape %v: need a 3D array (z, y, x)", shape)
	}
	h.nz, h.ny, h.nx = shape[0], shape[1], shape[2]
	if !dimsOK(h.nx, h.ny, h.nz) {
		return npyHead{}, fmt.Errorf("npy: shape %v: each axis must be ≥ 1 and the total at most %d", shape, int64(MaxVoxels))
	}
	h.bo = binary.LittleEndian
	if len(descr) < 3 {
		return npyHead{}, fmt.Errorf("npy: dtype %q not read", excerpt(descr))
	}
	switch descr[0] {
	case '>':
		h.bo = binary.BigEndian
	case '<', '|', '=':
	default:
		return npyHead{}, fmt.Errorf("npy: dtype %q not read", excerpt(descr))
	}
	h.kind = descr[1]
	size, err := strconv.Atoi(descr[2:])
	if err != nil || (h.kind != 'u' && h.kind != 'i' && h.kind != 'b') || (size != 1 && size != 2 && size != 4 && size != 8) {
		return npyHead{}, fmt.Errorf("npy: dtype %q: need an integer or boolean dtype (u1, i2, <i8, ...)", excerpt(descr))
	}
	h.size = size
	return h, nil
}

// npyDims reads an .npy header and returns the dimensions, the file length
// the header implies and the length of the header itself.
func npyDims(r io.Reader) (nx, ny, nz int, need, head int64, err error) {
	h, err := readNPYHeader(bufio.NewReader(r))
	if err != nil {
		return 0, 0, 0, 0, 0, err
	}
	return h.nx, h.ny, h.nz, h.headerBytes + int64(h.nx)*int64(h.ny)*int64(h.nz)*int64(h.size), h.headerBytes, nil
}

// parseNPYHeader reads the Python dict literal of an .npy header.
func parseNPYHeader(h string) (descr string, fortran bool, shape []int, err error) {
	h = strings.TrimSpace(h)
	if !strings.HasPrefix(h, "{") || !strings.HasSuffix(h, "}") {
		return "", false, nil, fmt.Errorf("npy: header %q is not a dict", excerpt(h))
	}
	get := func(key string) (string, bool) {
		for _, q := range []string{"'", `"`} {
			k := strings.Index(h, q+key+q)
			if k < 0 {
				continue
			}
			rest := strings.TrimSpace(h[k+len(key)+2:])
			if !strings.HasPrefix(rest, ":") {
				return "", false
			}
			return strings.TrimSpace(rest[1:]), true
		}
		return "", false
	}
	d, ok := get("descr")
	if !ok || len(d) < 2 || (d[0] != '\'' && d[0] != '"') {
		return "", false, nil, fmt.Errorf("npy: header %q: no descr string", excerpt(h))
	}
	end := strings.IndexByte(d[1:], d[0])
	if end < 0 {
		return "", false, nil, fmt.Errorf("npy: header %q: bad descr", excerpt(h))
	}
	descr = d[1 : 1+end]
	f, ok := get("fortran_order")
	if !ok {
		return "", false, nil, fmt.Errorf("npy: header %q: no fortran_order", excerpt(h))
	}
	switch {
	case strings.HasPrefix(f, "True"):
		fortran = true
	case strings.HasPrefix(f, "False"):
	default:
		return "", false, nil, fmt.Errorf("npy: header %q: fortran_order must be True or False", excerpt(h))
	}
	s, ok := get("shape")
	if !ok || !strings.HasPrefix(s, "(") || !strings.Contains(s, ")") {
		return "", false, nil, fmt.Errorf("npy: header %q: no shape tuple", excerpt(h))
	}
	for _, part := range strings.Split(s[1:strings.IndexByte(s, ')')], ",") {
		part = strings.TrimSpace(strings.TrimSuffix(strings.TrimSpace(part), "L"))
		if part == "" {
			continue
		}
		v, err := strconv.Atoi(part)
		if err != nil || v < 0 {
			return "", false, nil, fmt.Errorf("npy: shape %q: need non-negative integers", excerpt(s))
		}
		shape = append(shape, v)
	}
	return descr, fortran, shape, nil
}

// ReadVolume reads a saved or imported volume by its extension: .vti
// (ReadVTI) or .npy (ReadNPY; no particle ids, voxel edge taken as 1 µm
// since the format does not carry it).
//
// Only regular files of at most MaxVolumeFileBytes are read, so that a
// device or a runaway file cannot make the reader grow without bound.
func ReadVolume(path string) (*Grid, error) {
	f, err := openVolume(path)
	if err != nil {
		return nil, err
	}
	defer f.Close()
	switch strings.ToLower(filepath.Ext(path)) {
	case ".vti":
		g, err := ReadVTI(f)
		if err != nil {
			return nil, fmt.Errorf("%s: %v", path, err)
		}
		return g, nil
	case ".npy":
		ph, nx, ny, nz, err := ReadNPY(f)
		if err != nil {
			return nil, fmt.Errorf("%s: %v", path, err)
		}
		g := &Grid{NX: nx, NY: ny, NZ: nz, VoxelUM: 1, Phase: ph, Particle: make([]int32, len(ph))}
		return g, nil
	default:
		return nil, fmt.Errorf("%s: unknown volume type %q: use .vti or .npy", path, excerpt(filepath.Ext(path)))
	}
}

// MaxVolumeFileBytes bounds the size of a volume file that ReadVolume and
// StatVolume open: 16 GiB, enough for the largest box (MaxVoxels) saved as
// .vti with both arrays.
const MaxVolumeFileBytes = 16 << 30

func openVolume(path string) (*os.File, error) {
	f, err := os.Open(path)
	if err != nil {
		return nil, err
	}
	st, err := f.Stat()
	if err != nil {
		f.Close()
		return nil, err
	}
	if !st.Mode().IsRegular() {
		f.Close()
		return nil, fmt.Errorf("%s: not a regular file", path)
	}
	if st.Size() > MaxVolumeFileBytes {
		f.Close()
		return nil, fmt.Errorf("%s: %d bytes, more than the %d bytes a volume file may have", path, st.Size(), int64(MaxVolumeFileBytes))
	}
	return f, nil
}

// StatVolume reads only the header of a .vti or .npy volume and returns its
// dimensions in voxels, so that a caller can estimate the memory a full read
// and analysis would need before it allocates anything. For .npy files it
// also checks that the file is long enough for the data its header declares.
func StatVolume(path string) (nx, ny, nz int, err error) {
	f, err := openVolume(path)
	if err != nil {
		return 0, 0, 0, err
	}
	defer f.Close()
	switch strings.ToLower(filepath.Ext(path)) {
	case ".vti":
		head := make([]byte, 1<<16)
		k, _ := io.ReadFull(f, head)
		nx, ny, nz, err = vtiDims(head[:k])
	case ".npy":
		var need, head int64
		nx, ny, nz, need, head, err = npyDims(f)
		if err == nil {
			if st, e := f.Stat(); e == nil && st.Size() < need {
				n := int64(nx) * int64(ny) * int64(nz)
				have := max(st.Size()-head, 0) / ((need - head) / n)
				err = fmt.Errorf("npy: data ends after %d of the %d values (%d×%d×%d) the header declares", have, n, nz, ny, nx)
			}
		}
	default:
		return 0, 0, 0, fmt.Errorf("%s: unknown volume type %q: use .vti or .npy", path, excerpt(filepath.Ext(path)))
	}
	if err != nil {
		return 0, 0, 0, fmt.Errorf("%s: %v", path, err)
	}
	return nx, ny, nz, nil
}

// vtiDims finds the WholeExtent of the ImageData element in the first bytes
// of a .vti file.
func vtiDims(head []byte) (nx, ny, nz int, err error) {
	k := bytes.Index(head, []byte("<ImageData"))
	if k < 0 {
		return 0, 0, 0, errors.New("vti: no ImageData element in the first 64 KiB")
	}
	rest := head[k:]
	if e := bytes.IndexByte(rest, '>'); e >= 0 {
		rest = rest[:e]
	}
	const key = `WholeExtent="`
	a := bytes.Index(rest, []byte(key))
	if a < 0 {
		return 0, 0, 0, errors.New("vti: ImageData has no WholeExtent")
	}
	val := rest[a+len(key):]
	b := bytes.IndexByte(val, '"')
	if b < 0 {
		return 0, 0, 0, errors.New("vti: unterminated WholeExtent")
	}
	ext, err := parseInts(string(val[:b]), 6)
	if err != nil {
		return 0, 0, 0, fmt.Errorf("vti: WholeExtent %q: %v", excerpt(val[:b]), err)
	}
	nx, ny, nz = ext[1]-ext[0], ext[3]-ext[2], ext[5]-ext[4]
	if !dimsOK(nx, ny, nz) {
		return 0, 0, 0, fmt.Errorf("vti: WholeExtent %q: each axis must hold ≥ 1 cell and the total at most %d", excerpt(val[:b]), int64(MaxVoxels))
	}
	return nx, ny, nz, nil
}
