package check

import (
	"math"
	"testing"

	"github.com/ringlog/ringlog/pipeline"
)

func TestClippingFlatTop(t *testing.T) {
	h := goodHit()
	h.ClipLevel = 0.6 * h.Modes[0].Amplitude // the amplifier saturates at 60 % of the first peak
	in := input(h)
	rs := wantReason(t, Clipping{}.Check(in, DefaultThresholds()), CodeClipped, pipeline.SeverityReject, 1)
	wantIn(t, rs[0].Message, `response channel "accel"`, "flat-topped at 12", "m/s^2")

	// The first clipped sample: the first time the closed-form decay
	// A e^{-sigma t} sin(wd t) exceeds the clip level after the trigger.
	// The noise (0.2 m/s^2) may cross it one sample early or late.
	first := -1
	for i, v := range in.Response.Samples {
		if math.Abs(v) >= h.ClipLevel {
			first = i
			break
		}
	}
	m := h.Modes[0]
	wd := 2 * math.Pi * m.FrequencyHz * math.Sqrt(1-m.DampingRatio*m.DampingRatio)
	tClip := h.PreTrigger + math.Asin(0.6)/wd // e^{-sigma t} ~ 1 this early
	if d := math.Abs(float64(first)/fsTest - tClip); d > 2/fsTest {
		t.Fatalf("first clipped sample at %.5f s, closed form %.5f s", float64(first)/fsTest, tClip)
	}
}

func TestClippingFullScale(t *testing.T) {
	in := input(goodHit())
	peak := peakAbs(in.Response.Samples)

	in.Response.FullScale = peak * 1.002 // the peak is within 0.5 % of the range
	rs := wantReason(t, Clipping{}.Check(in, DefaultThresholds()), CodeClipped, pipeline.SeverityReject, 1)
	wantIn(t, rs[0].Message, "full scale", "on 1 samples")

	in.Response.FullScale = peak * 2 // half the range used: clean
	wantNone(t, Clipping{}.Check(in, DefaultThresholds()))
}

func TestClippingCleanHits(t *testing.T) {
	wantNone(t, Clipping{}.Check(input(goodHit()), DefaultThresholds()))
	wantNone(t, Clipping{}.Check(input(multiHit()), DefaultThresholds()))
}

// A slow sine quantised coarsely has runs of equal samples at its peaks
// that are not clipping; cut at 80 % it is.
func TestClippingQuantisedPeak(t *testing.T) {
	const q = 1e-3 // quantisation step, 1/1000 of the amplitude
	x := make([]float64, 4000)
	for i := range x {
		x[i] = math.Round(math.Sin(2*math.Pi*2*float64(i)/fsTest)/q) * q
	}
	ch := &pipeline.Channel{Name: "slow", Role: pipeline.RoleResponse, SampleRate: fsTest, Samples: x}
	longest, run := 0, 0
	for i := 1; i < len(x); i++ {
		if x[i] == x[i-1] && x[i] == 1 {
			run++
			longest = max(longest, run+1)
		} else {
			run = 0
		}
	}
	if longest < 3 {
		t.Fatalf("test signal has no flat run at its peak (longest %d): the test would not test the guard", longest)
	}
	wantNone(t, Clipping{}.Check(Input{Response: ch}, DefaultThresholds()))

	for i := range x {
		x[i] = math.Max(-0.8, math.Min(0.8, x[i]))
	}
	wantReason(t, Clipping{}.Check(Input{Response: ch}, DefaultThresholds()), CodeClipped, pipeline.SeverityReject, 1)
}

func TestClippingForce(t *testing.T) {
	h := goodHit()
	h.PulseWidth = 0.004 // 16 samples, so the cut top spans several samples
	in := input(h)
	top := 0.7 * h.PulsePeak
	for i, v := range in.Force.Samples {
		in.Force.Samples[i] = math.Min(v, top)
	}
	rs := wantReason(t, Clipping{}.Check(in, DefaultThresholds()), CodeClipped, pipeline.SeverityReject, 1)
	wantIn(t, rs[0].Message, `force channel "force"`)

	// A noise-free force record is flat at zero before and after the
	// pulse: its minimum is not an extreme worth looking at.
	f := make([]float64, 400)
	for i := 100; i <= 116; i++ {
		f[i] = 200 * math.Sin(math.Pi*float64(i-100)/16)
	}
	in.Force.Samples = f
	wantNone(t, Clipping{}.Check(in, DefaultThresholds()))
}
