package store

import (
	"context"
	"encoding/json"
	"fmt"
	"maps"
	"slices"
	"strings"
)

// SourceKind is what produced an external source's grades.
type SourceKind string

// The kinds of source.
const (
	SourceModel     SourceKind = "model"     // a model prompted or trained to grade
	SourceCampaign  SourceKind = "campaign"  // an earlier judging campaign's final grades
	SourceHeuristic SourceKind = "heuristic" // a rule or an older ranker's scores mapped to grades
)

// SourceKinds lists every kind in the order pages offer them.
var SourceKinds = []SourceKind{SourceModel, SourceCampaign, SourceHeuristic}

// Limits of a source's provenance: enough for a model name, a prompt's SHA-256 and a few
// parameters; the prompt itself belongs in a file of its own.
const (
	maxSourceAbout      = 32
	maxSourceAboutKey   = 64
	maxSourceAboutValue = 2000
)

const upsertSourceDetails = `INSERT INTO source_details(user_id, kind, about, updated_at) VALUES (?, ?, ?, ?)
	ON CONFLICT(user_id) DO UPDATE SET kind = excluded.kind, about = excluded.about, updated_at = excluded.updated_at`

func validSourceDetails(kind SourceKind, about map[string]string) error {
	if kind == "" {
		if len(about) > 0 {
			return errorf(CodeInvalid, "say what kind of source this is (model, campaign or heuristic) along with where its grades came from")
		}
		return nil
	}
	if !slices.Contains(SourceKinds, kind) {
		return errorf(CodeInvalid, fmt.Sprintf("unknown kind of source %q: choose model, campaign or heuristic", kind))
	}
	if len(about) > maxSourceAbout {
		return errorf(CodeInvalid, fmt.Sprintf("%d provenance fields: at most %d", len(about), maxSourceAbout))
	}
	for k, v := range about {
		switch {
		case strings.TrimSpace(k) == "" || len(k) > maxSourceAboutKey:
			return errorf(CodeInvalid, fmt.Sprintf("provenance field name %q: give 1 to %d characters", k, maxSourceAboutKey))
		case len(v) > maxSourceAboutValue:
			return errorf(CodeInvalid, fmt.Sprintf("provenance field %s: %d characters, at most %d (keep a long prompt in a file and give its SHA-256)", k, len(v), maxSourceAboutValue))
		}
	}
	return nil
}

// sourceDetails records the import's kind and provenance of the source, when it gives them.
func (im *importer) sourceDetails(id int64) error {
	if im.spec.SourceKind == "" {
		return nil
	}
	about, err := json.Marshal(im.spec.SourceAbout)
	if err != nil {
		return err
	}
	if im.spec.SourceAbout == nil {
		about = []byte("{}")
	}
	_, err = im.tx.ExecContext(im.ctx, upsertSourceDetails, id, string(im.spec.SourceKind), string(about), im.at)
	return err
}

// Source is an external source of grades with judgments in a project.
type Source struct {
	UserID int64             `json:"-"`
	Name   string            `json:"name"`
	Kind   SourceKind        `json:"kind,omitempty"` // empty: never said
	About  map[string]string `json:"about"`
	Grades int               `json:"grades"` // current grades in the project
}

// AboutKeys gives the provenance's field names in order, for pages.
func (s Source) AboutKeys() []string { return slices.Sorted(maps.Keys(s.About)) }

// Sources lists the external sources with current grades in the project, by name.
func (s *Store) Sources(ctx context.Context, projectID int64) ([]Source, error) {
	all, err := queryAll(ctx, s.r, `SELECT u.id, u.username, COALESCE(d.kind, ''), COALESCE(d.about, '{}'),
			(SELECT COUNT(*) FROM judgments j JOIN pairs p ON p.id = j.pair_id
				WHERE j.user_id = u.id AND p.project_id = ? AND j.current = 1 AND j.grade IS NOT NULL)
		FROM users u LEFT JOIN source_details d ON d.user_id = u.id
		WHERE u.role = 'source'
		ORDER BY u.username`, func(r rowScanner) (Source, error) {
		var src Source
		var kind, about string
		if err := r.Scan(&src.UserID, &src.Name, &kind, &about, &src.Grades); err != nil {
			return src, err
		}
		src.Kind = SourceKind(kind)
		src.About = map[string]string{}
		return src, json.Unmarshal([]byte(about), &src.About)
	}, projectID)
	return slices.DeleteFunc(all, func(src Source) bool { return src.Grades == 0 }), err
}

// checkFillFrom refuses a label policy's FillFrom that names no source of the project.
func (s *Store) checkFillFrom(ctx context.Context, projectID int64, name string) error {
	if name == "" {
		return nil
	}
	sources, err := s.Sources(ctx, projectID)
	if err != nil {
		return err
	}
	for _, src := range sources {
		if src.Name == name {
			return nil
		}
	}
	return errorf(CodeInvalid, fmt.Sprintf("there is no source of grades named %q in this project (see Sources)", name))
}
