package percolation

// Clusters is a labelling of a voxel set into connected clusters.
type Clusters struct {
	Box Box

	// Label holds, per voxel, the id of its cluster (0, 1, …, Count()−1) or
	// −1 for a voxel outside the set. Ids are given in the order of each
	// cluster's first voxel in index order, so a labelling is unique.
	Label []int32

	// Size holds the number of voxels of each cluster.
	Size []int

	// Spans holds, per cluster and axis, whether the cluster spans the box
	// along that axis: along a non-periodic axis it has voxels on both faces
	// (coordinate 0 and N−1); along a periodic axis it wraps, that is, it
	// joins its own periodic image (see the package doc).
	Spans [][3]bool
}

// Count returns the number of clusters.
func (c *Clusters) Count() int { return len(c.Size) }

// Connectivity summarises a labelling.
type Connectivity struct {
	Voxels   int     // voxels in the set
	Clusters int     // number of clusters
	Spanning int     // voxels in clusters that span at least one axis
	Fraction float64 // connected fraction Spanning/Voxels; 0 for an empty set
	Span     [3]bool // per axis: some cluster spans it
	SpanAxes int     // number of axes spanned, 0–3
}

// Connectivity returns the summary of the labelling.
func (c *Clusters) Connectivity() Connectivity {
	var s Connectivity
	s.Clusters = len(c.Size)
	for k, n := range c.Size {
		s.Voxels += n
		sp := c.Spans[k]
		if sp[0] || sp[1] || sp[2] {
			s.Spanning += n
		}
		for a := range 3 {
			s.Span[a] = s.Span[a] || sp[a]
		}
	}
	for a := range 3 {
		if s.Span[a] {
			s.SpanAxes++
		}
	}
	if s.Voxels > 0 {
		s.Fraction = float64(s.Spanning) / float64(s.Voxels)
	}
	return s
}

// Labeler labels clusters with the Hoshen–Kopelman method: one raster pass
// with union–find over provisional labels, then the bonds across periodic
// faces with winding offsets, then a relabelling pass. A Labeler keeps its
// buffers between calls, so a long-lived one allocates nothing once it has
// seen the largest box. The zero value is ready to use; a Labeler is not
// safe for concurrent use.
type Labeler struct {
	parent []int32    // provisional label → parent label (parent ≤ label)
	off    [][3]int32 // winding of a label's cell relative to its parent's
	wrap   []uint8    // per provisional root: bit a set when it wraps along axis a
	final  []int32    // provisional label v → cluster id at v+1; −1 at 0
	count  []int32    // voxels per cluster c at c+1
	touch  []uint16   // per cluster: bits 2a, 2a+1 for the low and high face of axis a, bit 6+a wrap
	in     []bool     // scratch set for Pores and Solids
	cl     Clusters
}

// Label labels the face-connected (6-connected) clusters of the voxels i
// with in[i] true. It panics if len(in) does not match the box.
func Label(box Box, in []bool) *Clusters {
	var l Labeler
	return l.Label(box, in)
}

// LabelBonded is Label where two face-neighbouring voxels a, b of the set
// are joined only when bond(a, b) is true. bond must be symmetric; it is
// called only for neighbours both in the set (and, on a periodic axis of
// length 1 or 2, possibly for a voxel and itself or twice for one pair).
func LabelBonded(box Box, in []bool, bond func(a, b int) bool) *Clusters {
	var l Labeler
	return l.LabelBonded(box, in, bond)
}

// Release lets go of l's buffers, so that a long-lived Labeler does not
// hold its per-voxel storage while its result is no longer needed; the
// next call allocates them anew. The last result is invalid after it.
func (l *Labeler) Release() { *l = Labeler{} }

// Label is the package-level Label on reused buffers. The result, its
// slices included, belongs to l and is overwritten by l's next call.
func (l *Labeler) Label(box Box, in []bool) *Clusters {
	return l.LabelBonded(box, in, nil)
}

// LabelBonded is the package-level LabelBonded on reused buffers; a nil
// bond joins every pair. The result belongs to l as for Label.
func (l *Labeler) LabelBonded(box Box, in []bool, bond func(a, b int) bool) *Clusters {
	box.mustFit(len(in), "voxel set")
	l.scan(box, in, bond)
	if box.Periodic[0] || box.Periodic[1] || box.Periodic[2] {
		l.joinPeriodic(box, in, bond)
	}
	l.relabel(box)
	return &l.cl
}

// find returns the root of label x, halving the path on the way.
func find(p []int32, x int32) int32 {
	for p[x] != x {
		p[x] = p[p[x]]
		x = p[x]
	}
	return x
}

// merge joins the trees of root r (or none when r < 0) and root m and
// returns the new root, always the smaller label.
func merge(p []int32, r, m int32) int32 {
	switch {
	case r < 0 || r == m:
		return m
	case r < m:
		p[m] = r
		return r
	default:
		p[r] = m
		return m
	}
}

// scan is the raster pass: each voxel of the set takes the label of its
// bonded −x, −y, −z neighbours inside the box, merging theirs, or a new one.
func (l *Labeler) scan(box Box, in []bool, bond func(a, b int) bool) {
	nx, ny, nz := box.NX, box.NY, box.NZ
	n := box.Len()
	if cap(l.cl.Label) < n {
		l.cl.Label = make([]int32, n)
	}
	lab := l.cl.Label[:n]
	l.cl.Label = lab
	if bond == nil {
		l.scanAll(box, in)
		return
	}
	parent := l.parent[:0]
	plane := nx * ny
	for z := range nz {
		for y := range ny {
			row := nx * (y + ny*z)
			ins := in[row : row+nx]
			labs := lab[row : row+nx]
			for x, ok := range ins {
				if !ok {
					labs[x] = -1
					continue
				}
				i := row + x
				r := int32(-1)
				if x > 0 && ins[x-1] && (bond == nil || bond(i-1, i)) {
					r = find(parent, labs[x-1])
				}
				if y > 0 {
					if j := i - nx; in[j] && (bond == nil || bond(j, i)) {
						r = merge(parent, r, find(parent, lab[j]))
					}
				}
				if z > 0 {
					if j := i - plane; in[j] && (bond == nil || bond(j, i)) {
						r = merge(parent, r, find(parent, lab[j]))
					}
				}
				if r < 0 {
					r = int32(len(parent))
					parent = append(parent, r)
				}
				labs[x] = r
			}
		}
	}
	l.parent = parent
}

// scanAll is scan with every pair bonded. The label carried along the row
// from the −x neighbour is always a root: it only changes when this voxel
// merges trees, and then it becomes the merged root. The labels it assigns
// are those of scan (same merges, same new labels).
func (l *Labeler) scanAll(box Box, in []bool) {
	nx, ny, nz := box.NX, box.NY, box.NZ
	lab := l.cl.Label
	parent := l.parent[:0]
	plane := nx * ny
	for z := range nz {
		for y := range ny {
			row := nx * (y + ny*z)
			ins := in[row : row+nx]
			labs := lab[row : row+nx][:len(ins)]
			var labY, labZ []int32 // −1 outside the set
			if y > 0 {
				labY = lab[row-nx : row][:len(ins)]
			}
			if z > 0 {
				labZ = lab[row-plane : row-plane+nx][:len(ins)]
			}
			// A neighbour joined to an earlier neighbour through the corner
			// voxel they share is in the same tree already: its find and
			// merge are skipped. Left (x−1) and up (y−1) share (x−1, y−1);
			// left and back (z−1) share (x−1, z−1); up and back share
			// (y−1, z−1).
			var labYZ []int32
			if y > 0 && z > 0 {
				labYZ = lab[row-plane-nx : row-plane][:len(ins)]
			}
			prev := int32(-1)
			for x, ok := range ins {
				if !ok {
					labs[x] = -1
					prev = -1
					continue
				}
				r := prev
				up := false
				if labY != nil && labY[x] >= 0 {
					up = true
					if !(r >= 0 && labY[x-1] >= 0) {
						r = merge(parent, r, find(parent, labY[x]))
					}
				}
				if labZ != nil && labZ[x] >= 0 {
					if !(prev >= 0 && labZ[x-1] >= 0) && !(up && labYZ[x] >= 0) {
						r = merge(parent, r, find(parent, labZ[x]))
					}
				}
				if r < 0 {
					r = int32(len(parent))
					parent = append(parent, r)
				}
				labs[x] = r
				prev = r
			}
		}
	}
	l.parent = parent
}

// findOff returns the root of x and the winding of x's cell relative to the
// root's, compressing the path.
func (l *Labeler) findOff(x int32) (int32, [3]int32) {
	p, off := l.parent, l.off
	var t [3]int32
	r := x
	for p[r] != r {
		o := off[r]
		t[0] += o[0]
		t[1] += o[1]
		t[2] += o[2]
		r = p[r]
	}
	tot := t
	for v := x; v != r; {
		next, o := p[v], off[v]
		p[v], off[v] = r, t
		t[0] -= o[0]
		t[1] -= o[1]
		t[2] -= o[2]
		v = next
	}
	return r, tot
}

// joinPeriodic adds the bonds across periodic faces. After scan every label
// lies in the box's own cell; a bond from voxel a on the high face of axis k
// to voxel b on the low face reaches b's image one cell up along k. Joining
// two trees records the cell offset of one root from the other; a bond
// inside one tree whose cells disagree closes a loop that winds around the
// box, and the cluster wraps along each axis where the windings differ.
func (l *Labeler) joinPeriodic(box Box, in []bool, bond func(a, b int) bool) {
	nl := len(l.parent)
	if cap(l.off) < nl {
		l.off = make([][3]int32, nl)
		l.wrap = make([]uint8, nl)
	}
	l.off = l.off[:nl]
	l.wrap = l.wrap[:nl]
	clear(l.off)
	clear(l.wrap)
	lab := l.cl.Label
	join := func(a, b, k int) {
		if !in[a] || !in[b] || (bond != nil && !bond(a, b)) {
			return
		}
		ra, oa := l.findOff(lab[a])
		rb, ob := l.findOff(lab[b])
		oa[k]++
		d := [3]int32{oa[0] - ob[0], oa[1] - ob[1], oa[2] - ob[2]}
		switch {
		case ra == rb:
			for a := range 3 {
				if d[a] != 0 {
					l.wrap[ra] |= 1 << a
				}
			}
		case ra < rb:
			l.parent[rb], l.off[rb] = ra, d
			l.wrap[ra] |= l.wrap[rb]
		default:
			l.parent[ra], l.off[ra] = rb, [3]int32{-d[0], -d[1], -d[2]}
			l.wrap[rb] |= l.wrap[ra]
		}
	}
	nx, ny, nz := box.NX, box.NY, box.NZ
	plane := nx * ny
	if box.Periodic[0] {
		for r := 0; r < ny*nz; r++ {
			join(r*nx+nx-1, r*nx, 0)
		}
	}
	if box.Periodic[1] {
		for z := range nz {
			for x := range nx {
				join(x+nx*(ny-1)+plane*z, x+plane*z, 1)
			}
		}
	}
	if box.Periodic[2] {
		for i := range plane {
			join(i+plane*(nz-1), i, 2)
		}
	}
}

// relabel turns provisional labels into cluster ids in order of first
// voxel and collects sizes, face contacts and spans.
//
// The first voxel of a cluster in raster order has no earlier neighbour in
// the cluster, so it opens a new provisional label, smaller than every
// other label of the cluster; and every union keeps the smaller root. The
// root of each tree is thus the label of its cluster's first voxel, and
// numbering the roots in label order numbers the clusters in order of
// their first voxel. The voxel pass is then one lookup per voxel, without
// branches: final[v+1] is the cluster of label v, and final[0] = −1 for the
// voxels outside the set.
func (l *Labeler) relabel(box Box) {
	parent := l.parent
	nl := len(parent)
	if cap(l.final) < nl+1 {
		l.final = make([]int32, nl+1)
	}
	final := l.final[:nl+1]
	final[0] = -1
	periodic := box.Periodic[0] || box.Periodic[1] || box.Periodic[2]
	touch := l.touch[:0]
	// Parents are never larger than their children, so in label order
	// every root comes before the labels of its tree.
	nc := int32(0)
	for i, p := range parent {
		if int(p) == i {
			final[i+1] = nc
			nc++
			var w uint16
			if periodic {
				w = uint16(l.wrap[i]) << 6
			}
			touch = append(touch, w)
			continue
		}
		r := parent[p] // p's parent is already its root
		parent[i] = r
		final[i+1] = final[r+1]
	}
	if cap(l.count) < int(nc)+1 {
		l.count = make([]int32, nc+1)
	}
	count := l.count[:nc+1]
	clear(count)
	nx, ny, nz := box.NX, box.NY, box.NZ
	lab := l.cl.Label
	for z := range nz {
		for y := range ny {
			row := nx * (y + ny*z)
			labs := lab[row : row+nx]
			for x, v := range labs {
				c := final[v+1]
				labs[x] = c
				count[c+1]++
			}
			var t uint16 // faces of the row
			if y == 0 {
				t |= 1 << 2
			}
			if y == ny-1 {
				t |= 1 << 3
			}
			if z == 0 {
				t |= 1 << 4
			}
			if z == nz-1 {
				t |= 1 << 5
			}
			if t != 0 {
				for _, c := range labs {
					if c >= 0 {
						touch[c] |= t
					}
				}
			}
			if c := labs[0]; c >= 0 {
				touch[c] |= 1
			}
			if c := labs[nx-1]; c >= 0 {
				touch[c] |= 2
			}
		}
	}
	sizes := l.cl.Size[:0]
	for _, n := range count[1:] {
		sizes = append(sizes, int(n))
	}
	spans := l.cl.Spans[:0]
	for _, t := range touch {
		var s [3]bool
		for a := range 3 {
			if box.Periodic[a] {
				s[a] = t&(1<<(6+a)) != 0
			} else {
				s[a] = t&(3<<(2*a)) == 3<<(2*a)
			}
		}
		spans = append(spans, s)
	}
	l.cl.Box = box
	l.cl.Size = sizes
	l.cl.Spans = spans
	l.touch = touch
}
