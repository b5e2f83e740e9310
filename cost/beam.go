package cost

import "time"

// BeamWorkItemOverhead is what one work item costs a Beam pipeline beyond reading its rows:
// allocating the partial sketch, encoding it in the sketch file format to hand it to the combiner,
// decoding and merging it there, and the runner's per-element bookkeeping. It was measured on
// prism with a 2000-row coreset, the default 4096-row sample and 24 columns (bench/report/BEAM.md:
// 26 to 73 ms per item and core over three runs on a shared machine; this is their middle), and
// grows with (coreset + sample) × columns. Distributed runners add a scheduling and shuffle cost
// of their own per element that is not in this figure.
const BeamWorkItemOverhead = 40 * time.Millisecond

// BeamPipelineStartup is the fixed cost of a prism run in-process: starting the job service and
// the loopback worker and staging the pipeline (bench/report/BEAM.md). On Flink, Spark or Dataflow
// the job submission and worker start-up take seconds to minutes and must be measured there.
const BeamPipelineStartup = 50 * time.Millisecond

// BeamPassSeconds prices the pass of w run as a Beam pipeline on w.Workers workers: the
// single-worker pass divided by the workers, plus units × BeamWorkItemOverhead / workers, plus
// BeamPipelineStartup once.
func BeamPassSeconds(w Workload, c Calibration) float64 {
	one := w
	one.Workers = 1
	t := Predict(one, c).Terms
	n := float64(max(1, w.Workers))
	return BeamPipelineStartup.Seconds() + (t.Scan+t.Sketch+t.Feed)/n + float64(w.Units)*BeamWorkItemOverhead.Seconds()/n
}

// BeamWorkerBytes is the memory one Beam worker holds while it reads a work item: one partial
// sketch (sketch.HeldBytes, as in PredictMemory), its read buffer and one page per column chunk,
// on top of the runtime's base, with the collector's headroom.
func BeamWorkerBytes(w Workload, c Calibration) int64 {
	one := w
	one.Workers, one.Units = 1, 1
	m := PredictMemory(one, c)
	live := m.Sketches + m.ReadBuffers + m.PageBuffers
	return m.Base + live*int64(100+GCPercent)/100
}
