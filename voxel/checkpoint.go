package voxel

import (
	"bytes"
	"compress/flate"
	"crypto/sha256"
	"encoding/binary"
	"encoding/gob"
	"errors"
	"fmt"
	"io"
	"math/rand/v2"

	"gelspace/kinetics"
)

// Checkpoint file layout: the magic line, a format version (uint32, big
// endian), the SHA-256 of the payload, the payload length (uint64), and the
// payload: a DEFLATE-compressed gob of checkpointData. The payload holds the
// full state — lattice, class sets in their exact order, dissolved units,
// accumulators, pools, clock, the random generator's state — so a resumed
// run continues exactly where the saved one stood.
const (
	checkpointMagic   = "gelspace checkpoint\n"
	checkpointVersion = 2
)

type checkpointData struct {
	Fingerprint [32]byte
	NX, NY, NZ  int
	VoxelUM     float64
	Phase       []uint8
	Particle    []int32
	PartInit    []int32
	Sets        [][]int32
	State       state
	Extra       []byte
}

// Fingerprint identifies the settings a run was started with; a checkpoint
// is refused by settings with another fingerprint.
func (set *EngineSettings) Fingerprint() [32]byte {
	return sha256.Sum256([]byte(fmt.Sprintf("%#v|%#v|%v|%d", set.Params, set.Thermal, set.Sealed, set.Seed)))
}

// WriteCheckpoint saves the engine's full state and the caller's extra
// bytes (for example the rows of output written so far).
func (e *Engine) WriteCheckpoint(w io.Writer, set *EngineSettings, extra []byte) error {
	var err error
	if e.s.RNG, err = e.pcg.MarshalBinary(); err != nil {
		return err
	}
	d := checkpointData{Fingerprint: set.Fingerprint(), NX: e.g.NX, NY: e.g.NY, NZ: e.g.NZ, VoxelUM: e.g.VoxelUM,
		Phase: e.g.Phase, Particle: e.g.Particle, PartInit: e.partInit, Sets: e.sets, State: e.s, Extra: extra}
	var payload bytes.Buffer
	fw, _ := flate.NewWriter(&payload, flate.BestSpeed)
	if err := gob.NewEncoder(fw).Encode(&d); err != nil {
		return fmt.Errorf("voxel: encoding checkpoint: %w", err)
	}
	if err := fw.Close(); err != nil {
		return err
	}
	sum := sha256.Sum256(payload.Bytes())
	var hdr bytes.Buffer
	hdr.WriteString(checkpointMagic)
	binary.Write(&hdr, binary.BigEndian, uint32(checkpointVersion))
	hdr.Write(sum[:])
	binary.Write(&hdr, binary.BigEndian, uint64(payload.Len()))
	if _, err := w.Write(hdr.Bytes()); err != nil {
		return err
	}
	_, err = w.Write(payload.Bytes())
	return err
}

// ErrCheckpoint wraps every reason a checkpoint is refused.
var ErrCheckpoint = errors.New("checkpoint refused")

// ReadCheckpoint restores an engine saved by WriteCheckpoint, and returns
// the extra bytes saved with it. It refuses, with an error wrapping
// ErrCheckpoint, a file that is truncated or corrupt (checksum), of another
// format version, or saved with other settings.
func ReadCheckpoint(r io.Reader, set EngineSettings) (*Engine, []byte, error) {
	bad := func(format string, a ...any) error {
		return fmt.Errorf("%w: %s", ErrCheckpoint, fmt.Sprintf(format, a...))
	}
	hdr := make([]byte, len(checkpointMagic)+4+32+8)
	if _, err := io.ReadFull(r, hdr); err != nil {
		return nil, nil, bad("not a gelspace checkpoint (too short)")
	}
	if string(hdr[:len(checkpointMagic)]) != checkpointMagic {
		return nil, nil, bad("not a gelspace checkpoint")
	}
	p := len(checkpointMagic)
	if v := binary.BigEndian.Uint32(hdr[p:]); v != checkpointVersion {
		return nil, nil, bad("format version %d, this gelspace reads version %d", v, checkpointVersion)
	}
	var sum [32]byte
	copy(sum[:], hdr[p+4:])
	n := binary.BigEndian.Uint64(hdr[p+36:])
	if n > 1<<36 {
		return nil, nil, bad("payload length %d is implausible", n)
	}
	// Read as far as the data goes, so that a header claiming a huge
	// payload in front of a short file cannot make us allocate it.
	payload, err := io.ReadAll(io.LimitReader(r, int64(n)))
	if err != nil || uint64(len(payload)) != n {
		return nil, nil, bad("truncated: %d bytes of payload expected, %d present", n, len(payload))
	}
	if sha256.Sum256(payload) != sum {
		return nil, nil, bad("checksum mismatch: the file is corrupt")
	}
	var d checkpointData
	if err := gob.NewDecoder(flate.NewReader(bytes.NewReader(payload))).Decode(&d); err != nil {
		return nil, nil, bad("decoding: %v", err)
	}
	if d.Fingerprint != set.Fingerprint() {
		return nil, nil, bad("it was saved with other settings (config, kinetics, seed or curing differ)")
	}
	nvox := d.NX * d.NY * d.NZ
	if len(d.Phase) != nvox || len(d.Particle) != nvox {
		return nil, nil, bad("lattice size does not match its dimensions")
	}
	g := &Grid{NX: d.NX, NY: d.NY, NZ: d.NZ, VoxelUM: d.VoxelUM, Phase: d.Phase, Particle: d.Particle}
	// Build a fresh engine for the derived tables, then put the saved state
	// in place of what it computed.
	e, err := NewEngine(g.Clone(), set)
	if err != nil {
		return nil, nil, err
	}
	e.g = g
	e.buildSolidNb()
	e.partInit = d.PartInit
	e.s = d.State
	e.setCementMass()
	if len(d.Sets) != len(e.sets) {
		return nil, nil, bad("rate classes do not match this gelspace")
	}
	e.sets = d.Sets
	for i := range e.cls {
		e.cls[i] = noClass
	}
	for k := range e.sumW {
		e.sumW[k], e.sumH[k] = 0, 0
		e.nAccW[k], e.nAccH[k] = 0, 0
	}
	for c, set := range e.sets {
		for k, i := range set {
			if int(i) < 0 || int(i) >= nvox {
				return nil, nil, bad("class member out of range")
			}
			e.cls[i] = uint16(c)
			e.slot[i] = int32(k)
			e.sumW[c/classesPerPhase] += int(triW[c%classesPerPhase])
			e.sumH[c/classesPerPhase] += int(triH[c%classesPerPhase])
			if triW[c%classesPerPhase] > 0 {
				e.nAccW[c/classesPerPhase]++
			} else {
				e.nAccH[c/classesPerPhase]++
			}
		}
	}
	e.pcg = &rand.PCG{}
	if err := e.pcg.UnmarshalBinary(e.s.RNG); err != nil {
		return nil, nil, bad("random generator state: %v", err)
	}
	e.r = rand.New(e.pcg)
	return e, d.Extra, nil
}

// Clone returns an independent copy of the engine in its present state: it
// goes on exactly as the original would. It is the in-memory counterpart of
// a checkpoint, for replays (refining an event between two output ages).
//
// The clone shares the particle map (Grid.Particle) with the original:
// hydration never changes it, so the copies of a refinement cost the
// lattice's phases and classes alone (4 bytes per voxel less each).
func (e *Engine) Clone() *Engine { return e.CloneInto(nil) }

// CloneInto is Clone into the per-voxel buffers of dst, an engine the
// caller gives up (nil: fresh buffers), so that a replay that drops one
// copy for the next makes no garbage of its size.
func (e *Engine) CloneInto(dst *Engine) *Engine {
	var old Engine
	if dst != nil && dst != e {
		old = *dst
	}
	c := *e
	g := *e.g
	var oldPhase []kinetics.ID
	if old.g != nil {
		oldPhase = old.g.Phase
	}
	g.Phase = append(oldPhase[:0], e.g.Phase...)
	c.g = &g
	c.cls = append(old.cls[:0], e.cls...)
	c.slot = append(old.slot[:0], e.slot...)
	c.solidNb = append(old.solidNb[:0], e.solidNb...)
	c.hydNb = append(old.hydNb[:0], e.hydNb...)
	c.sets = make([][]int32, len(e.sets))
	for k, s := range e.sets {
		var b []int32
		if k < len(old.sets) && cap(old.sets[k]) >= len(s) {
			b = old.sets[k][:0]
		} else {
			b = make([]int32, 0, cap(s))
		}
		c.sets[k] = append(b, s...)
	}
	c.sumW = append([]int(nil), e.sumW...)
	c.sumH = append([]int(nil), e.sumH...)
	c.nAccW = append([]int(nil), e.nAccW...)
	c.nAccH = append([]int(nil), e.nAccH...)
	c.arrD = append([]float64(nil), e.arrD...)
	c.rates = append([]float64(nil), e.rates...)
	c.s = e.s.clone()
	pcg := *e.pcg
	c.pcg = &pcg
	c.r = rand.New(c.pcg)
	return &c
}

func (s state) clone() state {
	c := s
	for q := range s.Free {
		c.Free[q] = append([]int32(nil), s.Free[q]...)
		c.Fails[q] = append([]uint8(nil), s.Fails[q]...)
	}
	c.Acc = make([][]float64, len(s.Acc))
	for k := range s.Acc {
		c.Acc[k] = append([]float64(nil), s.Acc[k]...)
	}
	c.Spawned = make([][]int, len(s.Spawned))
	for k := range s.Spawned {
		c.Spawned[k] = append([]int(nil), s.Spawned[k]...)
	}
	c.RxVoxels = append([]int(nil), s.RxVoxels...)
	c.PartLeft = append([]int32(nil), s.PartLeft...)
	c.EmptyList = append([]int32(nil), s.EmptyList...)
	c.RNG = append([]byte(nil), s.RNG...)
	c.Coarse = s.Coarse.clone()
	return c
}

// Shelved is an engine put away in memory as its checkpoint: about 2 bytes
// per voxel of a hydrated paste against the engine's 15, for a state that
// is not advanced for a while (while a refinement replays from an earlier
// state, or while D/D0 is solved on the lattice). Restore gives back an
// engine that goes on exactly as the shelved one would, its guard
// included.
type Shelved struct {
	data  []byte
	set   EngineSettings
	guard func(events uint64, timeS float64) error
}

// Shelve saves e, run with settings set, to memory. e itself is unchanged;
// the caller drops it to free its memory.
func (e *Engine) Shelve(set EngineSettings) (*Shelved, error) {
	var b bytes.Buffer
	if err := e.WriteCheckpoint(&b, &set, nil); err != nil {
		return nil, err
	}
	return &Shelved{data: b.Bytes(), set: set, guard: e.guard}, nil
}

// Bytes returns the memory the shelved engine holds.
func (s *Shelved) Bytes() int { return len(s.data) }

// Restore returns the shelved engine.
func (s *Shelved) Restore() (*Engine, error) {
	e, _, err := ReadCheckpoint(bytes.NewReader(s.data), s.set)
	if err != nil {
		return nil, err
	}
	e.guard = s.guard
	return e, nil
}
