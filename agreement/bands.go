package agreement

import "math"

// Band is one named range of a coefficient. A value v is in the band when
// Min <= v (or Min < v if !MinInclusive) and v <= Max (or v < Max if
// !MaxInclusive). The first band of a BandScale also takes every value
// below its Min, the last every value above its Max.
type Band struct {
	Name         string  `json:"name"`
	Min          float64 `json:"min"`
	Max          float64 `json:"max"`
	MinInclusive bool    `json:"min_inclusive"`
	MaxInclusive bool    `json:"max_inclusive"`
}

// BandScale is an ordered list of bands with the source that proposed them.
type BandScale struct {
	Name   string `json:"name"`
	Source string `json:"source"`
	Bands  []Band `json:"bands"`
}

// LandisKoch is the Landis & Koch (1977) reading of kappa: < 0 poor,
// 0.00-0.20 slight, 0.21-0.40 fair, 0.41-0.60 moderate, 0.61-0.80
// substantial, 0.81-1.00 almost perfect. Their two-decimal ranges are read
// with upper ends inclusive, so 0.205 is fair.
var LandisKoch = BandScale{
	Name:   "Landis & Koch",
	Source: "Landis & Koch (1977) Biometrics 33(1) 159-174",
	Bands: []Band{
		{Name: "poor", Min: -1, Max: 0, MinInclusive: true},
		{Name: "slight", Min: 0, Max: 0.20, MinInclusive: true, MaxInclusive: true},
		{Name: "fair", Min: 0.20, Max: 0.40, MaxInclusive: true},
		{Name: "moderate", Min: 0.40, Max: 0.60, MaxInclusive: true},
		{Name: "substantial", Min: 0.60, Max: 0.80, MaxInclusive: true},
		{Name: "almost perfect", Min: 0.80, Max: 1, MaxInclusive: true},
	},
}

// KrippendorffThresholds is Krippendorff's (2004) advice for alpha: rely on
// data with alpha >= 0.800, draw only tentative conclusions for 0.667 <=
// alpha < 0.800, and treat data below 0.667 as insufficient.
var KrippendorffThresholds = BandScale{
	Name:   "Krippendorff",
	Source: "Krippendorff (2004) Content Analysis, 2nd ed., ch. 11",
	Bands: []Band{
		{Name: "insufficient", Min: -1, Max: 0.667, MinInclusive: true},
		{Name: "tentative", Min: 0.667, Max: 0.800, MinInclusive: true},
		{Name: "reliable", Min: 0.800, Max: 1, MinInclusive: true, MaxInclusive: true},
	},
}

// Classify returns the band name for v, or "" when v is undefined.
func (s BandScale) Classify(v Value) string {
	if !v.OK || math.IsNaN(v.V) || len(s.Bands) == 0 {
		return ""
	}
	x := v.V
	for i, b := range s.Bands {
		above := x > b.Min || (b.MinInclusive && x == b.Min) || i == 0
		below := x < b.Max || (b.MaxInclusive && x == b.Max) || i == len(s.Bands)-1
		if above && below {
			return b.Name
		}
	}
	return ""
}
