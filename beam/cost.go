package beam

import "time"

// WorkItemOverhead is what one work item costs the pipeline beyond reading its rows: allocating
// the partial sketch, encoding it in the sketch file format to hand it to the combiner, decoding and
// merging it there, and the runner's per-element bookkeeping. It was measured on prism with a
// 2000-row coreset, the default 4096-row sample and 24 columns (bench/report/BEAM.md: 26 to 73 ms per
// item and core over three runs on a shared machine; this is their middle), and grows with
// (coreset + sample) × columns. Distributed runners add a scheduling and shuffle cost of their own
// per element that is not in this figure. A plan for W workers adds units × WorkItemOverhead / W to
// the single-worker pass time divided by W, plus PipelineStartup once.
const WorkItemOverhead = 40 * time.Millisecond

// PipelineStartup is the fixed cost of a prism run in-process: starting the job service and the
// loopback worker and staging the pipeline (bench/report/BEAM.md). On Flink, Spark or Dataflow the
// job submission and worker start-up take seconds to minutes and must be measured there.
const PipelineStartup = 50 * time.Millisecond
