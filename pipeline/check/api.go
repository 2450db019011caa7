package check

import (
	"github.com/ringlog/ringlog/pipeline"
	"github.com/ringlog/ringlog/pipeline/modal"
)

// Input is what the rules look at for one hit.
type Input struct {
	Rec      *pipeline.Recording
	Response *pipeline.Channel // the response channel analysed
	Force    *pipeline.Channel // nil without a force channel
	Decay    *modal.Decay      // the estimators' findings on Response
}
