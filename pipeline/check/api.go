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

	// dropped marks the modes a rule earlier in Run dropped: a dropped mode
	// raises no further flag, alone or as one of a pair.
	dropped map[int]bool
	// pulse caches the force pulse, located once per hit.
	pulse *pulseCache
}

// isDropped reports whether mode i was dropped by an earlier rule.
func (in Input) isDropped(i int) bool { return in.dropped[i] }
