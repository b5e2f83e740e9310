package beam

import "github.com/kgauge/kgauge/cost"

// WorkItemOverhead is what one work item costs the pipeline beyond reading its rows; the figure
// and its measurement are cost.BeamWorkItemOverhead's. A plan for W workers adds
// units × WorkItemOverhead / W to the single-worker pass time divided by W, plus PipelineStartup
// once (cost.BeamPassSeconds).
const WorkItemOverhead = cost.BeamWorkItemOverhead

// PipelineStartup is the fixed cost of a prism run in-process (cost.BeamPipelineStartup).
const PipelineStartup = cost.BeamPipelineStartup
