package field

import (
	"math"
	"sort"
)

// Plate is a thin, simply supported rectangular steel plate.
type Plate struct {
	LengthM, WidthM, ThicknessM float64
	// Drive and Response are the hammer's and the accelerometer's
	// positions (x along the length, y along the width), m.
	Drive, Response [2]float64
}

// Steel's properties for Plate, handbook values: Young's modulus 210 GPa,
// Poisson's ratio 0.3, density 7850 kg/m^3.
const (
	steelE   = 210e9
	steelNu  = 0.3
	steelRho = 7850.0
)

// PlateModes returns the lowest n modes below fmax hertz of the plate,
// struck with impulse j (N s), all with damping ratio zeta, in ascending
// frequency. The natural frequencies are the closed form for a simply
// supported plate (Leissa, Vibration of Plates, NASA SP-160, 1969):
//
//	w_mn = pi^2 ((m/a)^2 + (n/b)^2) sqrt(D/(rho h)),  D = E h^3 / (12 (1 - nu^2)),
//
// with mode shapes sin(m pi x/a) sin(n pi y/b) and modal mass rho h a b/4;
// a mode's nominal acceleration amplitude at the response point after an
// impulse j at the drive point is phi_drive phi_response j w / M.
func PlateModes(p Plate, j, fmax float64, n int, zeta float64) []Mode {
	a, b, h := p.LengthM, p.WidthM, p.ThicknessM
	d := steelE * h * h * h / (12 * (1 - steelNu*steelNu))
	c := math.Sqrt(d / (steelRho * h))
	mass := steelRho * h * a * b / 4
	var out []Mode
	for m := 1; m < 40; m++ {
		for k := 1; k < 40; k++ {
			w := math.Pi * math.Pi * (float64(m*m)/(a*a) + float64(k*k)/(b*b)) * c
			f := w / (2 * math.Pi)
			if f >= fmax {
				continue
			}
			phi := func(x [2]float64) float64 {
				return math.Sin(float64(m)*math.Pi*x[0]/a) * math.Sin(float64(k)*math.Pi*x[1]/b)
			}
			out = append(out, Mode{FrequencyHz: f, DampingRatio: zeta, Amplitude: phi(p.Drive) * phi(p.Response) * j * w / mass})
		}
	}
	sort.Slice(out, func(i, k int) bool { return out[i].FrequencyHz < out[k].FrequencyHz })
	if len(out) > n {
		out = out[:n]
	}
	return out
}
