package pipeline

// AmplitudeBin is the damping of a mode over one band of amplitudes along
// its decay: the equivalent viscous damping ratio fitted to the mode's
// envelope while the envelope fell from AmplitudeRange[0] to
// AmplitudeRange[1]. A viscously damped mode has the same damping ratio in
// every bin; joints, rubbing and material non-linearity make it change with
// the amplitude.
type AmplitudeBin struct {
	// Amplitude is the envelope amplitude at the centre of the bin's fit,
	// in the units of the response channel.
	Amplitude float64 `json:"amplitude"`
	// AmplitudeRange is the envelope amplitude at the start and at the end
	// of the bin (start > end).
	AmplitudeRange [2]float64 `json:"amplitude_range"`
	// DampingRatio is the equivalent viscous damping ratio over the bin.
	DampingRatio float64 `json:"damping_ratio"`
	// DampingRatioCI is its 95 % interval.
	DampingRatioCI [2]float64 `json:"damping_ratio_ci95"`
	// Cycles is the number of cycles the bin spans.
	Cycles float64 `json:"cycles"`
}
