package agreement

// RawAgreement is uncorrected agreement averaged as in Fleiss' P-bar: for
// each item with m >= 2 ratings, the share of its m(m-1) ordered rating
// pairs that agree, then the mean over those items (each item weighs the
// same, whatever its m). Exact agreement needs equal grades; adjacent
// agreement accepts grades at most one step apart (common practice in
// graded relevance work).
type RawAgreement struct {
	Exact    Value `json:"exact"`
	Adjacent Value `json:"adjacent"`
	Items    int   `json:"items"`
}

// Raw computes exact and adjacent raw agreement.
func Raw(d *Data) RawAgreement {
	return rawOf(tallyOf(d.built(), false))
}

func rawOf(t *tally) RawAgreement {
	k := t.k
	var exact, adj float64
	var items int64
	for m := 2; m < len(t.coinc); m++ {
		co := t.coinc[m]
		if co == nil {
			continue
		}
		var e, a int64
		for c := 0; c < k; c++ {
			for j := max(c-1, 0); j <= min(c+1, k-1); j++ {
				a += co[c*k+j]
				if j == c {
					e += co[c*k+j]
				}
			}
		}
		pairs := float64(m * (m - 1))
		exact += float64(e) / pairs
		adj += float64(a) / pairs
		items += t.units[m]
	}
	if items == 0 {
		why := "no item has two or more ratings"
		return RawAgreement{Exact: undefined(why), Adjacent: undefined(why)}
	}
	n := float64(items)
	return RawAgreement{Exact: defined(exact / n), Adjacent: defined(adj / n), Items: int(items)}
}
