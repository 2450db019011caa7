package live

import (
	"github.com/ringlog/ringlog/pipeline"
)

// advice is what a reason code means at the bay, in plain words, and what
// to do about it. The words are ours; the codes are pipeline/check's.
type advice struct {
	What, Do string
}

var adviceByCode = map[string]advice{
	"clipped": {"The signal reached the end of the measuring range: the peak is cut off.",
		"Strike more softly, or set a larger range on the amplifier, then strike again."},
	"double_strike": {"The hammer struck twice: it bounced off the part.",
		"Strike again with a short flick of the wrist and take the hammer back at once."},
	"pre_ringing": {"The part was still vibrating when the record started.",
		"Wait until it is quiet, then strike again."},
	"no_lead_in": {"The record has no quiet stretch before the hit, so its start cannot be checked.",
		"Give the recorder a longer pre-trigger."},
	"no_decay": {"Nothing in the record dies away like a vibrating part.",
		"Check that the hammer met the part and the sensor is connected, then strike again."},
	"under_excited": {"The hammer tip put too little force into this mode's frequency.",
		"Use a harder tip to reach higher modes."},
	"short_decay": {"The vibration sank into the noise after too few cycles.",
		"Strike a little harder or raise the gain; record for longer if the decay is cut."},
	"mixed_modes": {"Other modes carry a large share of the response.",
		"Strike at a point or in a direction that favours the mode you want."},
	"beating_modes": {"Two modes lie so close that they beat; their damping is less certain.",
		"Strike at a point that favours one of the two."},
	"friction_decay": {"The vibration dies away in a straight line: friction, not viscous damping.",
		"Look for a rubbing joint or a loose fixture before going on."},
	"damping_drift": {"The damping changes along the decay: it depends on the amplitude.",
		"Strike with the same strength each time, and note it."},
	"estimates_disagree": {"The ways of estimating the damping do not agree on this hit.",
		"Strike again; if it keeps happening, look at the plot."},
}

// adviceFor returns the plain words for reason r; an unknown code gets
// its own message and a general hint.
func adviceFor(r pipeline.Reason) advice {
	if a, ok := adviceByCode[r.Code]; ok {
		return a
	}
	return advice{What: r.Message, Do: "Look at the plot and the message below."}
}

// deciding returns the reason that decided the verdict of res: the first
// rejecting reason of a rejected hit (or the first dropping one when every
// mode was dropped), the first dropping or flagging reason of a flagged
// hit; false for an accepted hit.
func deciding(res *pipeline.Result) (pipeline.Reason, bool) {
	pick := func(sevs ...pipeline.Severity) (pipeline.Reason, bool) {
		for _, s := range sevs {
			for _, r := range res.Reasons {
				if r.Severity == s {
					return r, true
				}
			}
		}
		return pipeline.Reason{}, false
	}
	switch res.Verdict {
	case pipeline.Rejected:
		return pick(pipeline.SeverityReject, pipeline.SeverityDrop, pipeline.SeverityFlag)
	case pipeline.Flagged:
		return pick(pipeline.SeverityDrop, pipeline.SeverityFlag)
	}
	return pipeline.Reason{}, false
}
