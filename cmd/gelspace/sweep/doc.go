// Package sweep runs a grid of gelspace runs — a parameter study over any
// config keys, with replicates — on all cores or through a cluster's
// scheduler, resumably, and summarises it with statistics over the
// replicates and plots.
//
// Sweep files and the points they span (Load, Parse, Spec.Points).
//
// A sweep file names a base run config, replicates (seeds per point) and
// axes: any config key with a list of values or a range { from, to, step }
// (inclusive). The axes of [axes] cross; the axes of [zip] vary together
// (equal lengths) and count as one dimension. The points are numbered in
// row-major order of the dimensions as they appear in the file (the first
// dimension varies slowest), and each point has one folder per replicate,
// points/pNNNN_rR, with seed = base seed + R.
//
// Running a sweep (NewPlan, WritePlan, Run, WriteSchedulerFiles): the
// sweep folder's layout, the completion markers, the worker pool, and the
// plan for a cluster's scheduler.
//
// A sweep folder holds sweep.json (the plan: axes and points), points/
// with one folder per point and replicate (config.toml, the run's outputs,
// and done.json, the completion marker, written last), sweep.log (one line
// per point started, finished or failed), the summaries and plots/.
//
// done.json holds the SHA-256 of the point's config.toml (and the
// version): a point whose marker matches its present config is complete
// and is skipped on resume; any other point runs again from its start.
// Every output of a run is written through a temporary name and renamed,
// and the marker is renamed into place after all of them, so a sweep killed
// at any moment leaves complete points that are skipped and incomplete
// ones that rerun.
//
// Summaries (Collect, WriteSummaries): summary.csv (one row per point
// and replicate), summary_stats.csv (per point: count, mean, standard
// deviation and 95 % confidence interval over the replicates) and plots/ (each output against
// the first swept axis, one line per value of the other axes, error bars =
// the 95 % interval). They are built from the point folders alone, in
// point order, so gelspace sweep and gelspace sweep collect write the same
// files whatever the number of jobs or the order the points finished in.
//
// Units are those of the run outputs (package run): hours, days for the
// age columns, J/g, volume fractions. Statistics are the mean, the sample
// standard deviation and the 95 % confidence interval of the mean with
// Student's t. The package prints nothing: Run reports progress through
// its callback and writes sweep.log.
package sweep
