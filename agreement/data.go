package agreement

import (
	"cmp"
	"errors"
	"fmt"
	"slices"
	"strconv"
)

// MaxScale is the largest number of grades supported; K x K tables are kept
// per rater pair, so K is bounded.
const MaxScale = 100

// Rating is one judgment: a rater gave an item a grade in 0..K-1.
type Rating struct {
	Item  string `json:"item"`
	Rater string `json:"rater"`
	Grade int    `json:"grade"`
}

// Data collects judgments on a scale of K grades. Items and raters are keyed
// either by strings (Add) or by int64 ids (AddID), not both in one Data; an
// int64 id is named by its decimal form in results (raters by NameRaters
// when given). A later judgment for the
// same item and rater replaces the earlier one (edits supersede).
//
// Data interns keys to dense ints once and builds a per-item index lazily on
// first use; adding after that simply rebuilds it. Statistics only read a
// built Data: call any of them (or Items) once before sharing a Data
// between goroutines, and do not Add concurrently.
type Data struct {
	k     int
	keyed int // 0 unset, keyString, keyID

	itemStr, raterStr map[string]int32
	itemID, raterID   map[int64]int32
	itemNames         []string
	raterNames        []string
	itemIDs, raterIDs []int64
	raterLabel        func(int64) string // names of id-keyed raters (NameRaters)
	lastItem          int32              // item of the latest AddID, since input often comes by item

	jItem, jRater []int32
	jGrade        []uint8

	ix *index
}

const (
	keyString = 1
	keyID     = 2
)

// NewData returns an empty Data for a scale of k grades (0..k-1). It panics
// unless 2 <= k <= MaxScale (a programming error, like a negative make
// length); FromRatings returns an error instead.
func NewData(k int) *Data {
	if k < 2 || k > MaxScale {
		panic(fmt.Sprintf("agreement: scale %d out of range 2..%d", k, MaxScale))
	}
	return &Data{k: k}
}

// FromRatings builds a Data on a scale of k grades, failing on the first
// rating that Add rejects.
func FromRatings(k int, rs []Rating) (*Data, error) {
	if k < 2 || k > MaxScale {
		return nil, fmt.Errorf("agreement: scale %d out of range 2..%d", k, MaxScale)
	}
	d := NewData(k)
	d.Grow(len(rs))
	// Presize for the common case of a few ratings per item.
	d.keyed = keyString
	d.itemStr = make(map[string]int32, len(rs)/2)
	d.raterStr = map[string]int32{}
	for i, r := range rs {
		if err := d.Add(r.Item, r.Rater, r.Grade); err != nil {
			return nil, fmt.Errorf("rating %d: %w", i, err)
		}
	}
	return d, nil
}

// K is the number of grades on the scale.
func (d *Data) K() int { return d.k }

// Grow reserves room for n more judgments.
func (d *Data) Grow(n int) {
	d.jItem = slices.Grow(d.jItem, n)
	d.jRater = slices.Grow(d.jRater, n)
	d.jGrade = slices.Grow(d.jGrade, n)
}

var errMixedKeys = errors.New("agreement: string and int64 keys cannot be mixed in one Data")

func (d *Data) checkGrade(g int) error {
	if g < 0 || g >= d.k {
		return fmt.Errorf("grade %d out of range 0..%d", g, d.k-1)
	}
	return nil
}

// Add records that rater gave item the grade g. Empty keys and grades
// outside 0..K-1 are rejected.
func (d *Data) Add(item, rater string, g int) error {
	if d.keyed == keyID {
		return errMixedKeys
	}
	if item == "" || rater == "" {
		return errors.New("empty item or rater")
	}
	if err := d.checkGrade(g); err != nil {
		return err
	}
	if d.keyed == 0 {
		d.keyed = keyString
		d.itemStr = map[string]int32{}
		d.raterStr = map[string]int32{}
	}
	d.push(intern(d.itemStr, &d.itemNames, item), intern(d.raterStr, &d.raterNames, rater), g)
	return nil
}

// AddID is Add for callers that already hold integer ids (for example pair
// ids and user ids).
func (d *Data) AddID(item, rater int64, g int) error {
	if d.keyed == keyString {
		return errMixedKeys
	}
	if err := d.checkGrade(g); err != nil {
		return err
	}
	if d.keyed == 0 {
		d.keyed = keyID
		d.raterID = map[int64]int32{}
	}
	it := d.lastItem
	if len(d.itemIDs) == 0 || d.itemIDs[it] != item {
		it = d.internItem(item)
		d.lastItem = it
	}
	d.push(it, intern(d.raterID, &d.raterIDs, rater), g)
	return nil
}

// intern returns key's index in index, giving a key not seen before the next index and
// appending it to keys.
func intern[K comparable](index map[K]int32, keys *[]K, key K) int32 {
	i, ok := index[key]
	if !ok {
		i = int32(len(*keys))
		index[key] = i
		*keys = append(*keys, key)
	}
	return i
}

// NameRaters names the raters of id-keyed data (AddID) by name(id) instead of their decimal
// ids, and orders them by those names as string-keyed data would be: a Data built with
// AddID(item, id, g) and NameRaters(name) gives the same results as one built with
// Add(decimal item, name(id), g). Names must be distinct and non-empty; name is called
// whenever the per-item form is rebuilt.
func (d *Data) NameRaters(name func(id int64) string) error {
	if d.keyed == keyString {
		return errMixedKeys
	}
	d.raterLabel = name
	d.ix = nil
	return nil
}

// internItem returns the index of an int64 item, adding it when new. While items arrive in
// ascending order (as from a sorted query) itemIDs is sorted and no map is kept: a new item
// is one above the last, an old one is found by binary search.
func (d *Data) internItem(item int64) int32 {
	n := len(d.itemIDs)
	if d.itemID == nil {
		if n == 0 || item > d.itemIDs[n-1] {
			d.itemIDs = append(d.itemIDs, item)
			return int32(n)
		}
		if i, ok := slices.BinarySearch(d.itemIDs, item); ok {
			return int32(i)
		}
		d.itemID = make(map[int64]int32, n+1)
		for i, id := range d.itemIDs {
			d.itemID[id] = int32(i)
		}
	}
	return intern(d.itemID, &d.itemIDs, item)
}

// findItem looks up an int64 item without adding it.
func (d *Data) findItem(item int64) (int32, bool) {
	if d.itemID == nil {
		i, ok := slices.BinarySearch(d.itemIDs, item)
		return int32(i), ok
	}
	it, ok := d.itemID[item]
	return it, ok
}

func (d *Data) push(it, r int32, g int) {
	d.jItem = append(d.jItem, it)
	d.jRater = append(d.jRater, r)
	d.jGrade = append(d.jGrade, uint8(g))
	d.ix = nil
}

// itemName gives the key of interned item i.
func (d *Data) itemName(i int32) string {
	if d.keyed == keyID {
		return strconv.FormatInt(d.itemIDs[i], 10)
	}
	return d.itemNames[i]
}

func (d *Data) numItems() int {
	if d.keyed == keyID {
		return len(d.itemIDs)
	}
	return len(d.itemNames)
}

func (d *Data) numRaters() int {
	if d.keyed == keyID {
		return len(d.raterIDs)
	}
	return len(d.raterNames)
}

// index is the per-item form used by every statistic: for item i, its
// ratings are rater[start[i]:start[i+1]] and grade[...], sorted by rater,
// one per rater. Raters are renumbered in key order (strings
// lexicographically, ids numerically) so rater pairs come out sorted.
type index struct {
	k          int
	start      []int32
	rater      []int32
	grade      []uint8
	raterNames []string
	maxM       int
}

func (ix *index) nItems() int  { return len(ix.start) - 1 }
func (ix *index) nRaters() int { return len(ix.raterNames) }
func (ix *index) nJudgments() int {
	return int(ix.start[len(ix.start)-1])
}

// built returns the index, building it when needed.
func (d *Data) built() *index {
	if d.ix == nil {
		d.ix = d.build()
	}
	return d.ix
}

func (d *Data) build() *index {
	nI, nR, n := d.numItems(), d.numRaters(), len(d.jItem)
	ix := &index{k: d.k}

	// Rank raters by key so that pair (a, b) with a < b is in name order.
	order := make([]int32, nR)
	for i := range order {
		order[i] = int32(i)
	}
	names := d.raterNames
	if d.keyed == keyID && d.raterLabel != nil {
		names = make([]string, nR)
		for r, id := range d.raterIDs {
			names[r] = d.raterLabel(id)
		}
	}
	if d.keyed == keyID && d.raterLabel == nil {
		slices.SortFunc(order, func(a, b int32) int { return cmp.Compare(d.raterIDs[a], d.raterIDs[b]) })
	} else {
		slices.SortFunc(order, func(a, b int32) int { return cmp.Compare(names[a], names[b]) })
	}
	rank := make([]int32, nR)
	ix.raterNames = make([]string, nR)
	for pos, r := range order {
		rank[r] = int32(pos)
		if d.keyed == keyID && d.raterLabel == nil {
			ix.raterNames[pos] = strconv.FormatInt(d.raterIDs[r], 10)
		} else {
			ix.raterNames[pos] = names[r]
		}
	}

	// Counting sort by item keeps insertion order within an item.
	start := make([]int32, nI+1)
	for _, it := range d.jItem {
		start[it+1]++
	}
	for i := 1; i <= nI; i++ {
		start[i] += start[i-1]
	}
	fill := make([]int32, nI)
	copy(fill, start[:nI])
	rater := make([]int32, n)
	grade := make([]uint8, n)
	for j, it := range d.jItem {
		p := fill[it]
		fill[it]++
		rater[p] = rank[d.jRater[j]]
		grade[p] = d.jGrade[j]
	}

	// Sort each item's ratings by rater (stable, so a repeated rater keeps
	// insertion order) and keep the last of each repeated rater.
	w := int32(0)
	for i := 0; i < nI; i++ {
		lo, hi := start[i], start[i+1]
		rs, gs := rater[lo:hi], grade[lo:hi]
		sortByRater(rs, gs)
		start[i] = w
		for p := range rs {
			if p+1 < len(rs) && rs[p+1] == rs[p] {
				continue // superseded by a later judgment
			}
			rater[w], grade[w] = rs[p], gs[p]
			w++
		}
		if m := int(w - start[i]); m > ix.maxM {
			ix.maxM = m
		}
	}
	start[nI] = w
	ix.start, ix.rater, ix.grade = start, rater[:w], grade[:w]
	return ix
}

// sortByRater is a stable sort of parallel slices by rater: insertion sort
// for the usual handful of raters, a stable index sort for large items.
func sortByRater(rs []int32, gs []uint8) {
	if len(rs) <= 32 {
		for i := 1; i < len(rs); i++ {
			r, g := rs[i], gs[i]
			j := i
			for j > 0 && rs[j-1] > r {
				rs[j], gs[j] = rs[j-1], gs[j-1]
				j--
			}
			rs[j], gs[j] = r, g
		}
		return
	}
	type rg struct {
		r int32
		g uint8
	}
	tmp := make([]rg, len(rs))
	for i := range rs {
		tmp[i] = rg{rs[i], gs[i]}
	}
	slices.SortStableFunc(tmp, func(a, b rg) int { return cmp.Compare(a.r, b.r) })
	for i := range tmp {
		rs[i], gs[i] = tmp[i].r, tmp[i].g
	}
}

// Items is the number of distinct items judged.
func (d *Data) Items() int { return d.built().nItems() }

// Raters is the number of distinct raters.
func (d *Data) Raters() int { return d.built().nRaters() }

// Judgments is the number of judgments after superseded ones are dropped.
func (d *Data) Judgments() int { return d.built().nJudgments() }

// RaterNames lists raters in the order used by all per-rater results:
// strings sorted lexicographically, int64 ids numerically.
func (d *Data) RaterNames() []string { return slices.Clone(d.built().raterNames) }

// ItemNames lists items in the order used by per-item results: the order in
// which each item was first added.
func (d *Data) ItemNames() []string {
	n := d.numItems()
	out := make([]string, n)
	for i := range out {
		out[i] = d.itemName(int32(i))
	}
	return out
}
