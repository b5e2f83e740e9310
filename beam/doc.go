// Package beam runs kgauge's one pass on Apache Beam: the files are matched and planned once at
// launch (footers and probe, kgauge.PlanUnits), every (file, row group) becomes one work item, the
// work items are reshuffled over the workers, each work item is read into one partial sketch, the
// partial sketches are merged by a combiner whose accumulator is the sketch itself (carried between
// workers in the sketch file format), and the criteria run on the merged sketch, which writes the
// same JSON result as `kgauge estimate --json`.
//
// The pipeline runs on any Beam runner: prism in-process for tests and small jobs, Flink, Spark and
// Dataflow through Beam's portable job service. Binaries that run it must call beam.Init (from the
// Apache Beam SDK) after flag parsing, so that a worker started by the runner serves work instead of
// launching a new pipeline; cmd/kgauge-beam does.
package beam
