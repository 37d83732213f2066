package deviation

import (
	"crypto/sha256"
	"encoding/hex"
	"errors"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"regexp"
	"strconv"
	"strings"

	"gopkg.in/yaml.v3"

	"gonum.org/v1/gonum/spatial/r3"

	"saddlecheck/cloud"
	"saddlecheck/uncert"
)

// Design is a parsed design file: the design surface of a shell, in
// patches, and its conformity rule. All lengths are in metres, site frame.
type Design struct {
	Path      string // file as given to LoadDesign ("" for ParseDesign)
	SHA256    string // hex SHA-256 of the file bytes
	Structure string // free text
	Unit      cloud.Unit
	// NormalUp: deviations are positive towards +Z (`normal: up`), else
	// towards −Z.
	NormalUp bool
	// OffsetM: the measured face lies OffsetM from the design surface on
	// its positive side (a finish layer, a target plate): the deviation of
	// a point is D − OffsetM, D its signed distance from the design.
	OffsetM   float64
	MarginM   float64
	Patches   []Patch
	Tolerance Tolerance
	// Uncertainty is the measurement model of the `uncertainty:` section
	// (package uncert), applied to every input that has none of its own;
	// nil when the section is absent.
	Uncertainty *uncert.Model
	Warnings    []string
}

// Patch is one design patch.
type Patch struct {
	ID string
	// Kind is "corners" (bilinear patch), "saddle" (analytic saddle with a
	// plan extent), "plane" (corners found coplanar) or "mesh".
	Kind    string
	Surface Surface
	// Corners are the patch corners in metres (site frame) for the
	// analytic kinds; zero for meshes.
	Corners  [4]r3.Vec
	Notes    []string
	Warnings []string
	Line     int // line of the patch in the design file
	// box is the padded bounding box of the patch region (see Classify);
	// hasBox is false where no safe box is known (a mesh surface without
	// a Bounds method).
	boxLo, boxHi r3.Vec
	hasBox       bool
}

// DesignError is an error in a design file, with its position.
type DesignError struct {
	File   string // design file name
	Line   int    // 1-based line
	Column int    // 1-based column, 0 if unknown
	Key    string // key path such as "patches[2].corners"; "" for the file
	Err    error
}

func (e *DesignError) Error() string {
	if e.Key == "" {
		return fmt.Sprintf("%s:%d: %v", e.File, e.Line, e.Err)
	}
	return fmt.Sprintf("%s:%d: %s: %v", e.File, e.Line, e.Key, e.Err)
}

func (e *DesignError) Unwrap() error { return e.Err }

// Sentinel errors of design parsing (wrapped in *DesignError).
var (
	ErrUnknownKey = errors.New("unknown key")
	ErrMissingKey = errors.New("missing key")
	ErrDuplicate  = errors.New("duplicate")
	ErrValue      = errors.New("bad value")
	ErrSyntax     = errors.New("YAML syntax")
)

// LoadDesign reads and parses the design file at path; mesh paths are
// resolved relative to its directory.
func LoadDesign(path string) (*Design, error) {
	data, err := os.ReadFile(path)
	if err != nil {
		return nil, err
	}
	d, err := ParseDesign(path, data, filepath.Dir(path))
	if err != nil {
		return nil, err
	}
	d.Path = path
	return d, nil
}

// maxDesignBytes bounds a design file: a design is a few dozen patches,
// and a mesh patch names its mesh file rather than embedding it.
const maxDesignBytes = 8 << 20

// ParseDesign parses a design file's bytes. name is used in errors, dir
// resolves relative mesh paths. Every error is a *DesignError naming the
// line.
func ParseDesign(name string, data []byte, dir string) (*Design, error) {
	p := &parser{file: name, dir: dir}
	if len(data) > maxDesignBytes {
		return nil, p.errAt(1, 0, "", fmt.Errorf("%w: file larger than %d bytes", ErrValue, maxDesignBytes))
	}
	sum := sha256.Sum256(data)
	var doc yaml.Node
	if err := yaml.Unmarshal(data, &doc); err != nil {
		return nil, p.yamlError(err)
	}
	if doc.Kind == 0 || len(doc.Content) == 0 {
		return nil, p.errAt(1, 0, "", fmt.Errorf("%w: empty design file", ErrMissingKey))
	}
	d, err := p.design(doc.Content[0])
	if err != nil {
		return nil, err
	}
	d.SHA256 = hex.EncodeToString(sum[:])
	return d, nil
}

type parser struct {
	file string
	dir  string
	unit cloud.Unit
	up   r3.Vec
}

func (p *parser) errAt(line, col int, key string, err error) *DesignError {
	if line < 1 {
		line = 1
	}
	return &DesignError{File: p.file, Line: line, Column: col, Key: key, Err: err}
}

func (p *parser) errNode(n *yaml.Node, key string, format string, a ...any) *DesignError {
	return p.errAt(n.Line, n.Column, key, fmt.Errorf("%w: %s", ErrValue, fmt.Sprintf(format, a...)))
}

var yamlLine = regexp.MustCompile(`line (\d+)`)

// yamlError turns a YAML library error into a *DesignError; where the
// library gives no line, line 1 is reported.
func (p *parser) yamlError(err error) error {
	msg := strings.TrimPrefix(err.Error(), "yaml: ")
	line := 1
	if m := yamlLine.FindStringSubmatch(msg); m != nil {
		if n, e := strconv.Atoi(m[1]); e == nil {
			line = n
		}
		msg = strings.TrimSpace(strings.TrimPrefix(strings.Replace(msg, m[0], "", 1), ":"))
	}
	return p.errAt(line, 0, "", fmt.Errorf("%w: %s", ErrSyntax, msg))
}

// mapping checks that n is a mapping with only the allowed keys, no
// duplicates and no aliases, and returns its values by key.
func (p *parser) mapping(n *yaml.Node, key string, allowed []string) (map[string]*yaml.Node, error) {
	if err := p.plain(n, key); err != nil {
		return nil, err
	}
	if n.Kind != yaml.MappingNode {
		return nil, p.errNode(n, key, "want a mapping of keys (%s)", strings.Join(allowed, ", "))
	}
	out := make(map[string]*yaml.Node, len(n.Content)/2)
	for i := 0; i+1 < len(n.Content); i += 2 {
		k, v := n.Content[i], n.Content[i+1]
		if err := p.plain(k, key); err != nil {
			return nil, err
		}
		if k.Kind != yaml.ScalarNode {
			return nil, p.errNode(k, key, "keys must be plain words")
		}
		name := k.Value
		sub := joinKey(key, name)
		if !contains(allowed, name) {
			msg := fmt.Sprintf("%q (allowed here: %s)", name, strings.Join(allowed, ", "))
			if s := suggest(name, allowed); s != "" {
				msg = fmt.Sprintf("%q: did you mean %q?", name, s)
			}
			return nil, p.errAt(k.Line, k.Column, key, fmt.Errorf("%w %s", ErrUnknownKey, msg))
		}
		if _, dup := out[name]; dup {
			return nil, p.errAt(k.Line, k.Column, sub, fmt.Errorf("%w key", ErrDuplicate))
		}
		if err := p.plain(v, sub); err != nil {
			return nil, err
		}
		out[name] = v
	}
	return out, nil
}

// plain rejects anchors and aliases (a design file has no use for them,
// and refusing them rules out alias expansion bombs).
func (p *parser) plain(n *yaml.Node, key string) error {
	if n.Kind == yaml.AliasNode || n.Anchor != "" {
		return p.errAt(n.Line, n.Column, key, fmt.Errorf("%w: anchors and aliases are not supported in design files", ErrValue))
	}
	return nil
}

func (p *parser) require(m map[string]*yaml.Node, parent *yaml.Node, key string, names ...string) error {
	for _, name := range names {
		if _, ok := m[name]; !ok {
			return p.errAt(parent.Line, parent.Column, key, fmt.Errorf("%w %q", ErrMissingKey, name))
		}
	}
	return nil
}

func joinKey(parent, k string) string {
	if parent == "" {
		return k
	}
	return parent + "." + k
}

func contains(list []string, s string) bool {
	for _, x := range list {
		if x == s {
			return true
		}
	}
	return false
}

// suggest returns the allowed key nearest to s by edit distance, if it is
// within 2 edits (or a case or separator variant).
func suggest(s string, allowed []string) string {
	best, bd := "", 3
	norm := func(x string) string {
		return strings.ReplaceAll(strings.ReplaceAll(strings.ToLower(x), "-", "_"), " ", "_")
	}
	for _, a := range allowed {
		if norm(a) == norm(s) {
			return a
		}
		if d := editDistance(norm(s), a); d < bd {
			best, bd = a, d
		}
	}
	return best
}

// editDistance is the Levenshtein distance (insertions, deletions,
// substitutions), on bytes; inputs are short keys.
func editDistance(a, b string) int {
	if len(a) > 64 || len(b) > 64 {
		return 99
	}
	prev := make([]int, len(b)+1)
	cur := make([]int, len(b)+1)
	for j := range prev {
		prev[j] = j
	}
	for i := 1; i <= len(a); i++ {
		cur[0] = i
		for j := 1; j <= len(b); j++ {
			c := prev[j-1]
			if a[i-1] != b[j-1] {
				c++
			}
			cur[j] = min(c, prev[j]+1, cur[j-1]+1)
		}
		prev, cur = cur, prev
	}
	return prev[len(b)]
}

func (p *parser) scalar(n *yaml.Node, key string) (string, error) {
	if n.Kind != yaml.ScalarNode {
		return "", p.errNode(n, key, "want a single value")
	}
	return n.Value, nil
}

func (p *parser) number(n *yaml.Node, key string) (float64, error) {
	s, err := p.scalar(n, key)
	if err != nil {
		return 0, err
	}
	v, err := strconv.ParseFloat(strings.TrimSpace(s), 64)
	if err != nil || math.IsNaN(v) || math.IsInf(v, 0) {
		return 0, p.errNode(n, key, "%q is not a finite number", s)
	}
	return v, nil
}

func (p *parser) numbers(n *yaml.Node, key string, want int, what string) ([]float64, error) {
	if n.Kind != yaml.SequenceNode || (want > 0 && len(n.Content) != want) {
		return nil, p.errNode(n, key, "%s", what)
	}
	out := make([]float64, len(n.Content))
	for i, c := range n.Content {
		if err := p.plain(c, key); err != nil {
			return nil, err
		}
		v, err := p.number(c, key)
		if err != nil {
			return nil, err
		}
		out[i] = v
	}
	return out, nil
}

// point reads [x, y, z] in the file's unit and returns metres.
func (p *parser) point(n *yaml.Node, key string) (r3.Vec, error) {
	v, err := p.numbers(n, key, 3, "want a point of 3 numbers [x, y, z]")
	if err != nil {
		return r3.Vec{}, err
	}
	return r3.Vec{X: p.unit.ToMetres(v[0]), Y: p.unit.ToMetres(v[1]), Z: p.unit.ToMetres(v[2])}, nil
}

func (p *parser) corners(n *yaml.Node, key string) ([4]r3.Vec, error) {
	var c [4]r3.Vec
	const what = "corners needs 4 points of 3 numbers: [[x, y, z], [x, y, z], [x, y, z], [x, y, z]] in order around the edge"
	if n.Kind != yaml.SequenceNode || len(n.Content) != 4 {
		return c, p.errNode(n, key, "%s", what)
	}
	for i, pt := range n.Content {
		if err := p.plain(pt, key); err != nil {
			return c, err
		}
		if pt.Kind != yaml.SequenceNode || len(pt.Content) != 3 {
			return c, p.errNode(pt, fmt.Sprintf("%s[%d]", key, i), "%s", what)
		}
		v, err := p.point(pt, fmt.Sprintf("%s[%d]", key, i))
		if err != nil {
			return c, err
		}
		c[i] = v
	}
	return c, nil
}

var (
	topKeys       = []string{"structure", "units", "normal", "offset_mm", "margin_m", "patches", "tolerance", "uncertainty"}
	patchKeys     = []string{"id", "corners", "saddle", "mesh", "origin", "margin_m", "notes"}
	saddleKeys    = []string{"k1", "k2", "origin", "axes"}
	toleranceKeys = []string{"source", "limit_mm", "min_share", "max_abs_mm", "bands_mm", "far_mm"}
)

func (p *parser) design(root *yaml.Node) (*Design, error) {
	m, err := p.mapping(root, "", topKeys)
	if err != nil {
		return nil, err
	}
	if err := p.require(m, root, "", "units", "normal", "patches", "tolerance"); err != nil {
		return nil, err
	}
	d := &Design{MarginM: DefaultMarginM}
	if n, ok := m["structure"]; ok {
		if d.Structure, err = p.scalar(n, "structure"); err != nil {
			return nil, err
		}
	}
	us, err := p.scalar(m["units"], "units")
	if err != nil {
		return nil, err
	}
	if d.Unit, err = cloud.ParseUnit(us); err != nil || strings.TrimSpace(us) == "" {
		return nil, p.errNode(m["units"], "units", "%q: use m, mm, ft or us-ft", us)
	}
	p.unit = d.Unit
	ns, err := p.scalar(m["normal"], "normal")
	if err != nil {
		return nil, err
	}
	switch strings.ToLower(strings.TrimSpace(ns)) {
	case "up":
		d.NormalUp, p.up = true, r3.Vec{Z: 1}
	case "down":
		d.NormalUp, p.up = false, r3.Vec{Z: -1}
	default:
		return nil, p.errNode(m["normal"], "normal", "%q: use up (+Z) or down (−Z)", ns)
	}
	if n, ok := m["offset_mm"]; ok {
		v, err := p.number(n, "offset_mm")
		if err != nil {
			return nil, err
		}
		d.OffsetM = v / 1000
	}
	if n, ok := m["margin_m"]; ok {
		if d.MarginM, err = p.margin(n, "margin_m"); err != nil {
			return nil, err
		}
	}
	if d.Tolerance, err = p.tolerance(m["tolerance"]); err != nil {
		return nil, err
	}
	if n, ok := m["uncertainty"]; ok {
		um, err := uncert.DecodeModel(n)
		if err != nil {
			var le *uncert.LineError
			if errors.As(err, &le) {
				return nil, p.errAt(le.Line, 0, "", errors.New(le.Msg))
			}
			return nil, p.errNode(n, "uncertainty", "%v", err)
		}
		d.Uncertainty = &um
	}
	if math.Abs(d.OffsetM) >= d.Tolerance.FarM {
		return nil, p.errNode(m["offset_mm"], "offset_mm", "offset %g mm is not smaller than far_mm %g", d.OffsetM*1000, d.Tolerance.FarM*1000)
	}
	pn := m["patches"]
	if pn.Kind != yaml.SequenceNode || len(pn.Content) == 0 {
		return nil, p.errNode(pn, "patches", "want a list of at least one patch (- id: …)")
	}
	seen := map[string]int{}
	for i, n := range pn.Content {
		key := fmt.Sprintf("patches[%d]", i)
		pt, err := p.patch(n, key, d)
		if err != nil {
			return nil, err
		}
		if l, dup := seen[pt.ID]; dup {
			return nil, p.errAt(n.Line, n.Column, key+".id", fmt.Errorf("%w patch id %q (first on line %d)", ErrDuplicate, pt.ID, l))
		}
		seen[pt.ID] = n.Line
		d.Patches = append(d.Patches, pt)
		for _, w := range pt.Warnings {
			d.Warnings = append(d.Warnings, fmt.Sprintf("patch %s (line %d): %s", pt.ID, pt.Line, w))
		}
	}
	return d, nil
}

func (p *parser) margin(n *yaml.Node, key string) (float64, error) {
	v, err := p.number(n, key)
	if err != nil {
		return 0, err
	}
	if v < 0 {
		return 0, p.errNode(n, key, "margin %g m must be >= 0", v)
	}
	return v, nil
}

func (p *parser) tolerance(n *yaml.Node) (Tolerance, error) {
	const key = "tolerance"
	var t Tolerance
	m, err := p.mapping(n, key, toleranceKeys)
	if err != nil {
		return t, err
	}
	if err := p.require(m, n, key, "source", "limit_mm"); err != nil {
		return t, err
	}
	if t.Source, err = p.scalar(m["source"], key+".source"); err != nil {
		return t, err
	}
	if strings.TrimSpace(t.Source) == "" {
		return t, p.errNode(m["source"], key+".source", "source is empty: name the document, edition and clause the numbers come from")
	}
	mm := func(name string, dst *float64, check func(float64) string) error {
		c, ok := m[name]
		if !ok {
			return nil
		}
		v, err := p.number(c, key+"."+name)
		if err != nil {
			return err
		}
		if msg := check(v); msg != "" {
			return p.errNode(c, key+"."+name, "%g: %s", v, msg)
		}
		*dst = v
		return nil
	}
	positive := func(v float64) string {
		if v <= 0 {
			return "must be > 0"
		}
		return ""
	}
	if err := mm("limit_mm", &t.LimitM, positive); err != nil {
		return t, err
	}
	t.LimitM /= 1000
	if err := mm("min_share", &t.MinShare, func(v float64) string {
		if !(v > 0 && v <= 1) {
			return "must be a share in (0, 1], such as 0.95"
		}
		return ""
	}); err != nil {
		return t, err
	}
	if err := mm("max_abs_mm", &t.MaxAbsM, func(v float64) string {
		if v < t.LimitM*1000 {
			return fmt.Sprintf("must be >= limit_mm (%g)", t.LimitM*1000)
		}
		return ""
	}); err != nil {
		return t, err
	}
	t.MaxAbsM /= 1000
	if c, ok := m["bands_mm"]; ok {
		v, err := p.numbers(c, key+".bands_mm", 0, "want a list of numbers such as [5, 10, 20]")
		if err != nil {
			return t, err
		}
		if len(v) == 0 {
			return t, p.errNode(c, key+".bands_mm", "want at least one band")
		}
		for i := range v {
			if v[i] <= 0 || (i > 0 && v[i] <= v[i-1]) {
				return t, p.errNode(c, key+".bands_mm", "bands must be positive and strictly ascending, got %v", v)
			}
		}
		for i := range v {
			v[i] /= 1000
		}
		t.BandsM = v
	}
	if err := mm("far_mm", &t.FarM, positive); err != nil {
		return t, err
	}
	t.FarM /= 1000
	t = t.WithDefaults()
	if err := t.Validate(); err != nil {
		line := n
		if c, ok := m["far_mm"]; ok {
			line = c
		}
		return t, p.errAt(line.Line, line.Column, key, err)
	}
	return t, nil
}

func (p *parser) patch(n *yaml.Node, key string, d *Design) (Patch, error) {
	var pt Patch
	m, err := p.mapping(n, key, patchKeys)
	if err != nil {
		return pt, err
	}
	pt.Line = n.Line
	if err := p.require(m, n, key, "id"); err != nil {
		return pt, err
	}
	if pt.ID, err = p.scalar(m["id"], key+".id"); err != nil {
		return pt, err
	}
	if strings.TrimSpace(pt.ID) == "" {
		return pt, p.errNode(m["id"], key+".id", "empty id")
	}
	margin := d.MarginM
	if c, ok := m["margin_m"]; ok {
		if margin, err = p.margin(c, key+".margin_m"); err != nil {
			return pt, err
		}
	}
	if c, ok := m["notes"]; ok {
		s, err := p.scalar(c, key+".notes")
		if err != nil {
			return pt, err
		}
		pt.Notes = append(pt.Notes, s)
	}
	_, hasCorners := m["corners"]
	_, hasSaddle := m["saddle"]
	_, hasMesh := m["mesh"]
	_, hasOrigin := m["origin"]
	switch {
	case hasMesh:
		if hasCorners || hasSaddle {
			return pt, p.errNode(m["mesh"], key, "a mesh patch takes no corners or saddle")
		}
		return p.meshPatch(m, key, pt, d, margin)
	case hasOrigin:
		return pt, p.errNode(m["origin"], key+".origin", "origin belongs to mesh patches (a saddle's origin goes inside saddle:)")
	case !hasCorners:
		return pt, p.errAt(n.Line, n.Column, key, fmt.Errorf("%w: a patch needs corners (with or without saddle) or mesh", ErrMissingKey))
	}
	if pt.Corners, err = p.corners(m["corners"], key+".corners"); err != nil {
		return pt, err
	}
	if hasSaddle {
		s, err := p.saddle(m["saddle"], key+".saddle")
		if err != nil {
			return pt, err
		}
		sp, err := NewSaddlePatch(s, pt.Corners, margin)
		if err != nil {
			return pt, p.errAt(m["corners"].Line, m["corners"].Column, key+".corners", fmt.Errorf("%w: %v", ErrValue, err))
		}
		pt.Kind, pt.Surface = "saddle", sp
		pt.setBox(sp.bounds())
		return pt, nil
	}
	bp, err := NewBilinearPatch(pt.Corners, p.up, margin)
	switch {
	case err == nil:
		pt.Kind, pt.Surface = "corners", bp
		pt.Notes = append(pt.Notes, fmt.Sprintf("saddle z = %.6g x² %+.6g y² (1/m), saddle point (%.3f, %.3f, %.3f) m",
			bp.Saddle.K1, bp.Saddle.K2, bp.Saddle.Origin.X, bp.Saddle.Origin.Y, bp.Saddle.Origin.Z))
		pt.setBox(bp.bounds())
		return pt, nil
	case errors.Is(err, ErrCoplanar):
		pp, perr := NewPlanePatch(pt.Corners, p.up, margin)
		if perr != nil {
			return pt, p.errNode(m["corners"], key+".corners", "%v", perr)
		}
		pt.Kind, pt.Surface = "plane", pp
		pt.Warnings = append(pt.Warnings, fmt.Sprintf("corners are coplanar (max %.3g mm off their plane): measured against a plane, not a saddle", pp.Flatness()*1000))
		pt.setBox(pp.bounds())
		return pt, nil
	default:
		return pt, p.errNode(m["corners"], key+".corners", "%v", err)
	}
}

func (p *parser) saddle(n *yaml.Node, key string) (Saddle, error) {
	var s Saddle
	m, err := p.mapping(n, key, saddleKeys)
	if err != nil {
		return s, err
	}
	if err := p.require(m, n, key, saddleKeys...); err != nil {
		return s, err
	}
	k1, err := p.number(m["k1"], key+".k1")
	if err != nil {
		return s, err
	}
	k2, err := p.number(m["k2"], key+".k2")
	if err != nil {
		return s, err
	}
	// z = k·x² in file units: z_m = (k/u)·x_m², u the metres per unit.
	u := p.unit.Metres
	if u == 0 {
		u = 1
	}
	s.K1, s.K2 = k1/u, k2/u
	if s.Origin, err = p.point(m["origin"], key+".origin"); err != nil {
		return s, err
	}
	an := m["axes"]
	const what = "axes needs 3 unit vectors [[x axis], [y axis], [z axis]] as rows in the site frame"
	if an.Kind != yaml.SequenceNode || len(an.Content) != 3 {
		return s, p.errNode(an, key+".axes", "%s", what)
	}
	for i, row := range an.Content {
		if err := p.plain(row, key+".axes"); err != nil {
			return s, err
		}
		v, err := p.numbers(row, fmt.Sprintf("%s.axes[%d]", key, i), 3, what)
		if err != nil {
			return s, err
		}
		s.Axes[i] = r3.Vec{X: v[0], Y: v[1], Z: v[2]}
	}
	if z := r3.Dot(s.Axes[2], p.up); z <= 0 {
		side := "up"
		if p.up.Z < 0 {
			side = "down"
		}
		return s, p.errNode(an.Content[2], key+".axes[2]",
			"the z axis points away from the normal side (normal: %s); flip it: give axes [y, x, −z] with k1 = %g, k2 = %g", side, -k2, -k1)
	}
	if s.K1 < 0 || s.K2 > 0 {
		return s, p.errNode(m["k1"], key, "k1 = %g, k2 = %g: a saddle needs k1 >= 0 >= k2 (swap the x and y axes and the two values)", k1, k2)
	}
	if err := s.Validate(); err != nil {
		return s, p.errNode(an, key+".axes", "%v", err)
	}
	return s, nil
}

func (p *parser) meshPatch(m map[string]*yaml.Node, key string, pt Patch, d *Design, margin float64) (Patch, error) {
	mn := m["mesh"]
	rel, err := p.scalar(mn, key+".mesh")
	if err != nil {
		return pt, err
	}
	if strings.TrimSpace(rel) == "" {
		return pt, p.errNode(mn, key+".mesh", "empty mesh path")
	}
	var origin r3.Vec
	if c, ok := m["origin"]; ok {
		if origin, err = p.point(c, key+".origin"); err != nil {
			return pt, err
		}
	}
	kind := ""
	switch strings.ToLower(filepath.Ext(rel)) {
	case ".stl":
		kind = "stl"
	case ".xml", ".landxml":
		kind = "landxml"
	default:
		return pt, p.errNode(mn, key+".mesh", "%q: mesh files must be .stl or LandXML (.xml)", rel)
	}
	path := rel
	if !filepath.IsAbs(path) {
		path = filepath.Join(p.dir, rel)
	}
	lm, err := LoadMesh(kind, MeshSpec{Path: path, UnitMetres: p.unit.Metres, Origin: origin, NormalUp: d.NormalUp, MarginM: margin})
	if err != nil {
		return pt, p.errAt(mn.Line, mn.Column, key+".mesh", fmt.Errorf("%w: %v", ErrValue, err))
	}
	if lm == nil || lm.Surface == nil {
		return pt, p.errNode(mn, key+".mesh", "mesh loader returned no surface")
	}
	pt.Kind, pt.Surface = "mesh", lm.Surface
	// A mesh's closest points lie on its triangles, hence in its vertex
	// bounding box: a safe box for Classify.
	if b, ok := lm.Surface.(interface{ Bounds() (min, max r3.Vec) }); ok {
		lo, hi := b.Bounds()
		pt.setBox(lo, hi, true)
	}
	pt.Notes = append(pt.Notes, lm.Notes...)
	pt.Warnings = append(pt.Warnings, lm.Warnings...)
	return pt, nil
}

// Classify measures the site point x against the design: it projects x on
// every patch and, among those whose foot is Inside, takes the one with
// the smallest |D|. The returned pr has D replaced by the deviation
// D − OffsetM (positive on the normal side; the measured face is expected
// OffsetM beyond the design surface); Foot and Normal are on the design
// surface. Status: StatusUsed, StatusFar where |deviation| > FarM (patch
// and pr still given), or StatusOutside where no patch contains the foot
// (patch −1, pr of the nearest patch by |D|, for diagnostics).
//
// Patches whose padded bounding box, grown by FarM + |OffsetM|, does not
// contain x are tried only when no nearer patch gives a used point: any foot
// on them is that far away, so they cannot beat a used point, and the
// second pass keeps the result identical to projecting on every patch.
// Analytic patches derive their box from their geometry and margin; a
// mesh surface gets one when it has a method Bounds() (min, max r3.Vec)
// returning a box that holds every foot it reports (its vertex box).
// Classify does not allocate and is safe for concurrent use.
func (d *Design) Classify(x r3.Vec) (patch int, pr Projection, st Status) {
	// The running best is written through a pointer: keeping it as a
	// value costs the compiler a copy per patch, a third of the time.
	out := &pr
	far := d.Tolerance.FarM
	if far == 0 {
		far = DefaultFarM
	}
	reach := far + math.Abs(d.OffsetM)
	patch = -1
	bestAbs := math.Inf(1)
	skipped := false
	for i := range d.Patches {
		pt := &d.Patches[i]
		if pt.hasBox && !nearBox(x, pt.boxLo, pt.boxHi, reach) {
			skipped = true
			continue
		}
		p := pt.Surface.Project(x)
		if a := math.Abs(p.D); p.Inside && a < bestAbs {
			patch, bestAbs = i, a
			*out = p
		}
	}
	if patch >= 0 && math.Abs(out.D-d.OffsetM) <= far {
		out.D -= d.OffsetM
		return patch, pr, StatusUsed
	}
	return d.classifySlow(x, out, patch, bestAbs, skipped, far, reach)
}

// classifySlow finishes Classify for points not used on a nearby patch:
// it tries the skipped patches (so that the result is the same as
// projecting on every patch), then sorts out far and outside points.
func (d *Design) classifySlow(x r3.Vec, out *Projection, patch int, bestAbs float64, skipped bool, far, reach float64) (int, Projection, Status) {
	if skipped {
		for i := range d.Patches {
			pt := &d.Patches[i]
			if !pt.hasBox || nearBox(x, pt.boxLo, pt.boxHi, reach) {
				continue
			}
			p := pt.Surface.Project(x)
			if a := math.Abs(p.D); p.Inside && a < bestAbs {
				patch, bestAbs = i, a
				*out = p
			}
		}
	}
	if patch < 0 {
		// Outside: report the nearest patch by |D|, for diagnostics.
		near, nearAbs := -1, math.Inf(1)
		for i := range d.Patches {
			p := d.Patches[i].Surface.Project(x)
			if a := math.Abs(p.D); a < nearAbs {
				near, nearAbs = i, a
				*out = p
			}
		}
		if near >= 0 {
			out.D -= d.OffsetM
		}
		return -1, *out, StatusOutside
	}
	out.D -= d.OffsetM
	if math.Abs(out.D) > far {
		return patch, *out, StatusFar
	}
	return patch, *out, StatusUsed
}

// setBox records a bounding box for Classify, padded by 1 µm so that the
// rounding of computed feet (of order 1e-10 m at site magnitudes) cannot
// put one outside it; a non-finite or inverted box is not recorded.
func (p *Patch) setBox(lo, hi r3.Vec, ok bool) {
	v := lo.X + lo.Y + lo.Z + hi.X + hi.Y + hi.Z
	if !ok || math.IsNaN(v) || math.IsInf(v, 0) || lo.X > hi.X || lo.Y > hi.Y || lo.Z > hi.Z {
		p.hasBox = false
		return
	}
	pad := r3.Vec{X: 1e-6, Y: 1e-6, Z: 1e-6}
	p.boxLo, p.boxHi, p.hasBox = r3.Sub(lo, pad), r3.Add(hi, pad), true
}

// nearBox reports whether x lies in the box [lo, hi] grown by r on every
// side. Outside it, x is farther than r from the box (the grown box
// contains the ball of radius r around the box), so skipping is safe.
// Plain comparisons: the builtin min/max on floats cost more here than
// the whole test.
func nearBox(x, lo, hi r3.Vec, r float64) bool {
	return x.X >= lo.X-r && x.X <= hi.X+r &&
		x.Y >= lo.Y-r && x.Y <= hi.Y+r &&
		x.Z >= lo.Z-r && x.Z <= hi.Z+r
}

// Extent returns the plan bounding box (site X, Y) of the analytic patches'
// corners, for sizing a Grid; ok is false when no patch has corners.
func (d *Design) Extent() (lo, hi r3.Vec, ok bool) {
	lo = r3.Vec{X: math.Inf(1), Y: math.Inf(1), Z: math.Inf(1)}
	hi = r3.Scale(-1, lo)
	for _, p := range d.Patches {
		if p.Kind == "mesh" {
			if p.hasBox {
				lo, hi = boxUnion(lo, hi, p.boxLo, p.boxHi)
				ok = true
			}
			continue
		}
		for _, c := range p.Corners {
			lo, hi = boxUnion(lo, hi, c, c)
		}
		ok = true
	}
	return lo, hi, ok
}

func boxUnion(lo, hi, a, b r3.Vec) (r3.Vec, r3.Vec) {
	return r3.Vec{X: math.Min(lo.X, a.X), Y: math.Min(lo.Y, a.Y), Z: math.Min(lo.Z, a.Z)},
		r3.Vec{X: math.Max(hi.X, b.X), Y: math.Max(hi.Y, b.Y), Z: math.Max(hi.Z, b.Z)}
}

// PatchIDs returns the patch ids in file order.
func (d *Design) PatchIDs() []string {
	ids := make([]string, len(d.Patches))
	for i, p := range d.Patches {
		ids[i] = p.ID
	}
	return ids
}
