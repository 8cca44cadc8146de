// Package render turns gelspace phase volumes and time series into pictures:
// PNG slices in categorical phase colours or a backscattered-electron-like
// grey scale, animated GIF time-lapses, a shaded cut-away 3D view, time-series
// plots (PNG and SVG, with gonum/plot) and a self-contained HTML report.
//
// Volumes come in as a plain []uint8 of phase ids with their dimensions, in
// the layout of the voxel package (index x + NX*(y + NY*z), x fastest); the
// colours, grey levels and names of the phases come from the kinetics phase
// table. Phase ids that are not in the table (from an imported volume) are
// drawn in a fallback colour and listed in the legend as "id N".
//
// In every slice image the horizontal image axis is the first in-plane axis
// (x for xy and xz, y for yz) increasing to the right, and the vertical axis is
// the second (y for xy, z for xz and yz) increasing upwards, as drawn by the
// axis glyph in the image's corner. A slice is named by its index k along
// the plane's normal and by the position of its voxel centres, (k + 0.5)·h
// µm for voxels of edge h (SliceTitle), in every image.
//
// Volumes in plots are fractions of the paste volume: the whole box, solids
// and pores (water-filled and empty) together; axis labels and titles say so.
//
// Files are written through a temporary name in the destination folder and
// renamed into place, so no reader sees a half-written file.
package render
