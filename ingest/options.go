package ingest

// Format names an input encoding.
type Format int

const (
	CSV      Format = iota + 1 // header row, columns by name
	JSONL                      // one JSON object per line
	SVMlight                   // features only: `<grade> qid:<id> i:v ... # <doc-id>`
)

func (f Format) String() string {
	switch f {
	case CSV:
		return "CSV"
	case JSONL:
		return "JSONL"
	case SVMlight:
		return "SVMlight"
	}
	return "unknown format"
}

// Options tune a reader. The zero value is usable.
type Options struct {
	File         string // name used in problems; "input" when empty
	Scale        int    // number of grades K: grades are 0..K-1; 0 means 5
	MaxLineBytes int    // longest accepted line (CSV: row); 0 means 1 MiB
	MaxProblems  int    // problems listed before counting the rest; 0 means 20
}

const (
	defaultScale       = 5
	defaultMaxLine     = 1 << 20
	defaultMaxProblems = 20
)

func (o Options) withDefaults() Options {
	if o.File == "" {
		o.File = "input"
	}
	if o.Scale <= 0 {
		o.Scale = defaultScale
	}
	if o.MaxLineBytes <= 0 {
		o.MaxLineBytes = defaultMaxLine
	}
	if o.MaxProblems <= 0 {
		o.MaxProblems = defaultMaxProblems
	}
	return o
}

func (o Options) collector() *collector {
	return &collector{file: o.File, max: o.MaxProblems}
}
