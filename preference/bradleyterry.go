package preference

import (
	"cmp"
	"math"
	"slices"

	"gonum.org/v1/gonum/mat"

	"github.com/pertinent/pertinent"
)

// FitOptions set the Bradley–Terry fit. Zero fields take the defaults named.
type FitOptions struct {
	// PriorSD is the standard deviation of the Gaussian prior on each log-strength (2).
	PriorSD float64 `json:"prior_sd"`
	// Level of the intervals (0.95).
	Level float64 `json:"level"`
}

// Score is one document's fitted log-strength with its interval.
type Score struct {
	Document string  `json:"document"`
	Score    float64 `json:"score"`
	SE       float64 `json:"se"`
	Low      float64 `json:"low"`
	High     float64 `json:"high"`
	// Wins, Losses and Ties count the judgments the document took part in (neither
	// relevant left out).
	Wins   int `json:"wins"`
	Losses int `json:"losses"`
	Ties   int `json:"ties"`
}

// BradleyTerry is one query's fit.
type BradleyTerry struct {
	Query   string  `json:"query"`
	PriorSD float64 `json:"prior_sd"`
	Level   float64 `json:"level"`
	// Scores, best first (ties by document id).
	Scores []Score `json:"scores"`
	// Used counts the judgments in the fit; Neither those left out as neither relevant.
	Used    int `json:"used"`
	Neither int `json:"neither"`
	// Intransitive are the triples whose majorities go round in a circle.
	Intransitive []Triple `json:"intransitive"`
	// Iterations of Newton's method.
	Iterations int `json:"iterations"`
}

// FitBradleyTerry fits the Bradley–Terry model, P(i preferred to j) = σ(θi − θj) with θ the
// log-strengths, to one query's judgments by maximum a posteriori: the log-likelihood of
// every judgment plus a Gaussian prior N(0, PriorSD²) on each θ. The prior is what keeps a
// document that was never beaten (or never won) finite, and it fixes the scale's origin
// (the fitted θ sum to zero, since the likelihood only sees differences); it also keeps the
// Hessian invertible when the comparisons do not connect every document. We prefer it to
// virtual games against a made-up reference document because it treats every document alike
// and adds no parameter; with many judgments its pull fades. Each judgment counts, not the
// pair's majority: "about the same" counts as half a win for each side (as chess scores a
// draw), which keeps the model's two outcomes; "neither relevant" says nothing about order
// and is left out.
//
// Scores are thus measured from the mean of the query's documents. The interval is θ ± z·SE
// with SE from the inverse H⁻¹ of the penalised negative log-likelihood's Hessian at the
// optimum (the observed information with the prior added), taken for the centred scores:
// P H⁻¹ P with P = I − 11ᵀ/n. The likelihood is flat along 1, so there H has the prior's
// curvature alone, and H⁻¹ would add the prior's variance of the mean, PriorSD²/n, to every
// score though no judgment bears on it; P H⁻¹ P = H⁻¹ − PriorSD²/n · 11ᵀ removes exactly that.
// docs lists documents to score even if unjudged (they get the prior's interval); documents
// of the judgments are scored too.
func FitBradleyTerry(query string, docs []string, judgments []Judgment, o FitOptions) (BradleyTerry, error) {
	if o.PriorSD == 0 {
		o.PriorSD = 2
	}
	if o.Level == 0 {
		o.Level = 0.95
	}
	if !(o.PriorSD > 0) || math.IsInf(o.PriorSD, 0) {
		return BradleyTerry{}, pertinent.Errorf(pertinent.Invalid, source, "the prior's standard deviation must be positive, not %g", o.PriorSD)
	}
	if !(o.Level > 0 && o.Level < 1) {
		return BradleyTerry{}, pertinent.Errorf(pertinent.Invalid, source, "the interval's level must be between 0 and 1, not %g", o.Level)
	}
	t, err := tallies(query, judgments, true)
	if err != nil {
		return BradleyTerry{}, err
	}
	index := map[string]int{}
	var names []string
	addDoc := func(d string) int {
		i, ok := index[d]
		if !ok {
			i = len(names)
			index[d] = i
			names = append(names, d)
		}
		return i
	}
	for _, d := range docs {
		if d == "" {
			return BradleyTerry{}, pertinent.Errorf(pertinent.Invalid, source, "query %s: a document without an id", query)
		}
		addDoc(d)
	}
	fit := BradleyTerry{Query: query, PriorSD: o.PriorSD, Level: o.Level}
	var games []game
	for _, p := range t.sortedPairs() {
		v := t.votes[p]
		fit.Neither += v.Neither
		i, j := addDoc(p.A), addDoc(p.B)
		if n := v.A + v.B + v.Same; n > 0 {
			fit.Used += n
			games = append(games, game{i: i, j: j, n: float64(n), w: float64(v.A) + float64(v.Same)/2})
		}
	}
	m := &btModel{n: len(names), games: games, lambda: 1 / (o.PriorSD * o.PriorSD)}
	theta, cov, iters := m.fit()
	fit.Iterations = iters
	z := math.Sqrt2 * math.Erfinv(o.Level)
	fit.Scores = make([]Score, len(names))
	for i, d := range names {
		se := math.Sqrt(max(0, cov.At(i, i)-o.PriorSD*o.PriorSD/float64(len(names))))
		fit.Scores[i] = Score{Document: d, Score: theta[i], SE: se, Low: theta[i] - z*se, High: theta[i] + z*se}
	}
	for _, p := range t.pairs {
		v := t.votes[p]
		a, b := &fit.Scores[index[p.A]], &fit.Scores[index[p.B]]
		a.Wins, a.Losses, a.Ties = a.Wins+v.A, a.Losses+v.B, a.Ties+v.Same
		b.Wins, b.Losses, b.Ties = b.Wins+v.B, b.Losses+v.A, b.Ties+v.Same
	}
	slices.SortFunc(fit.Scores, func(x, y Score) int {
		return cmp.Or(cmp.Compare(y.Score, x.Score), cmp.Compare(x.Document, y.Document))
	})
	fit.Intransitive = intransitive(t)
	return fit, nil
}

// game is n judgments between documents i and j, of which i won w (ties as halves).
type game struct {
	i, j int
	n, w float64
}

type btModel struct {
	n      int
	games  []game
	lambda float64 // prior precision
}

// logSigmoid is log σ(x) without overflow.
func logSigmoid(x float64) float64 {
	if x >= 0 {
		return -math.Log1p(math.Exp(-x))
	}
	return x - math.Log1p(math.Exp(x))
}

func sigmoid(x float64) float64 {
	if x >= 0 {
		return 1 / (1 + math.Exp(-x))
	}
	e := math.Exp(x)
	return e / (1 + e)
}

// objective is the penalised negative log-likelihood.
func (m *btModel) objective(theta []float64) float64 {
	var f float64
	for _, g := range m.games {
		d := theta[g.i] - theta[g.j]
		f -= g.w*logSigmoid(d) + (g.n-g.w)*logSigmoid(-d)
	}
	for _, x := range theta {
		f += m.lambda * x * x / 2
	}
	return f
}

// derivatives returns the gradient and Hessian of the objective.
func (m *btModel) derivatives(theta []float64) ([]float64, *mat.SymDense) {
	grad := make([]float64, m.n)
	h := mat.NewSymDense(m.n, nil)
	for i, x := range theta {
		grad[i] = m.lambda * x
		h.SetSym(i, i, m.lambda)
	}
	for _, g := range m.games {
		p := sigmoid(theta[g.i] - theta[g.j])
		r := g.n*p - g.w
		grad[g.i] += r
		grad[g.j] -= r
		c := g.n * p * (1 - p)
		h.SetSym(g.i, g.i, h.At(g.i, g.i)+c)
		h.SetSym(g.j, g.j, h.At(g.j, g.j)+c)
		h.SetSym(g.i, g.j, h.At(g.i, g.j)-c)
	}
	return grad, h
}

// fit runs Newton's method from θ = 0 with step halving. The objective is strictly convex
// (a convex likelihood plus the prior), so the minimum is unique and Newton converges to it.
func (m *btModel) fit() (theta []float64, cov *mat.SymDense, iters int) {
	theta = make([]float64, m.n)
	if m.n == 0 {
		return theta, mat.NewSymDense(1, nil), 0
	}
	f := m.objective(theta)
	var chol mat.Cholesky
	step := mat.NewVecDense(m.n, nil)
	trial := make([]float64, m.n)
	for iters = 1; iters <= 200; iters++ {
		grad, h := m.derivatives(theta)
		if maxAbs(grad) < 1e-11 {
			break
		}
		if !chol.Factorize(h) {
			break // unreachable: the prior makes h positive definite
		}
		if err := chol.SolveVecTo(step, mat.NewVecDense(m.n, grad)); err != nil {
			break
		}
		for a := 1.0; a > 1e-10; a /= 2 {
			for i := range theta {
				trial[i] = theta[i] - a*step.AtVec(i)
			}
			if ft := m.objective(trial); ft <= f {
				f = ft
				copy(theta, trial)
				break
			}
		}
	}
	_, h := m.derivatives(theta)
	cov = mat.NewSymDense(m.n, nil)
	if chol.Factorize(h) {
		_ = chol.InverseTo(cov)
	}
	return theta, cov, iters
}

func maxAbs(xs []float64) float64 {
	var m float64
	for _, x := range xs {
		m = max(m, math.Abs(x))
	}
	return m
}
