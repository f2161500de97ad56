package agreement

import "math"

// CalibrationAnswer is one answer to a pair whose grade is known in advance: the grade given,
// or none (Graded false) when the assessor could not judge it.
type CalibrationAnswer struct {
	Grade  int
	Known  int
	Graded bool
}

// CalibrationScore sums up an assessor's calibration round. Exact is the share of graded
// answers equal to the known grade, with the Wilson score interval (Wilson, JASA 22, 1927);
// WithinOne the share at most one grade away; MeanAbs the mean absolute difference; MeanSigned
// the mean of given − known (above 0: the assessor grades higher than the key), with the
// Student t interval over the answers.
type CalibrationScore struct {
	Answered   int   `json:"answered"`
	Graded     int   `json:"graded"`
	Matched    int   `json:"matched"`
	Exact      Value `json:"exact"`
	ExactCI    CI    `json:"exact_ci"`
	WithinOne  Value `json:"within_one"`
	MeanAbs    Value `json:"mean_abs"`
	MeanSigned Value `json:"mean_signed"`
	SignedCI   CI    `json:"mean_signed_ci"`
}

// ScoreCalibration scores answers at a two-sided level (0.95 when 0).
func ScoreCalibration(answers []CalibrationAnswer, level float64) CalibrationScore {
	if level <= 0 || level >= 1 {
		level = 0.95
	}
	s := CalibrationScore{Answered: len(answers)}
	var within, abs, sum, sq float64
	for _, a := range answers {
		if !a.Graded {
			continue
		}
		s.Graded++
		d := float64(a.Grade - a.Known)
		if d == 0 {
			s.Matched++
		}
		if math.Abs(d) <= 1 {
			within++
		}
		abs += math.Abs(d)
		sum += d
		sq += d * d
	}
	if s.Graded == 0 {
		why := "no graded answers"
		s.Exact, s.WithinOne, s.MeanAbs, s.MeanSigned = undefined(why), undefined(why), undefined(why), undefined(why)
		s.ExactCI, s.SignedCI = undefinedInterval(why), undefinedInterval(why)
		return s
	}
	n := float64(s.Graded)
	p := float64(s.Matched) / n
	s.Exact, s.WithinOne, s.MeanAbs = defined(p), defined(within/n), defined(abs/n)
	z := zQuantile(level)
	centre := (p + z*z/(2*n)) / (1 + z*z/n)
	half := z / (1 + z*z/n) * math.Sqrt(p*(1-p)/n+z*z/(4*n*n))
	s.ExactCI = CI{Lo: defined(centre - half), Hi: defined(centre + half)}
	mean := sum / n
	s.MeanSigned = defined(mean)
	if s.Graded < 2 {
		s.SignedCI = undefinedInterval("one graded answer: no spread to measure")
		return s
	}
	sd := math.Sqrt(max(0, (sq-n*mean*mean)/(n-1)))
	t := tQuantile(1-(1-level)/2, n-1)
	s.SignedCI = CI{Lo: defined(mean - t*sd/math.Sqrt(n)), Hi: defined(mean + t*sd/math.Sqrt(n))}
	return s
}
