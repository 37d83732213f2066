package fit

import (
	"bufio"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"

	"gonum.org/v1/gonum/diff/fd"
	"gonum.org/v1/gonum/mat"
)

// nistModel is one NIST StRD nonlinear regression model, written by hand
// from the "Model:" block of its .dat file: value and gradient with respect
// to b at one observation's predictors x.
type nistModel func(grad, b, x []float64) float64

// nistModels maps each StRD dataset to its model. Source: the header of
// each file in ../shared/reference/nist-strd (NIST/ITL StRD).
var nistModels = map[string]nistModel{
	"Bennett5": func(g, b, x []float64) float64 {
		u := b[1] + x[0]
		p := math.Pow(u, -1/b[2])
		g[0] = p
		g[1] = b[0] * (-1 / b[2]) * p / u
		g[2] = b[0] * p * math.Log(u) / (b[2] * b[2])
		return b[0] * p
	},
	"BoxBOD":   expRise,
	"Misra1a":  expRise,
	"Chwirut1": chwirut,
	"Chwirut2": chwirut,
	"DanWood": func(g, b, x []float64) float64 {
		p := math.Pow(x[0], b[1])
		g[0] = p
		g[1] = b[0] * p * math.Log(x[0])
		return b[0] * p
	},
	"ENSO": func(g, b, x []float64) float64 {
		t := 2 * math.Pi * x[0]
		c1, s1 := math.Cos(t/12), math.Sin(t/12)
		c4, s4 := math.Cos(t/b[3]), math.Sin(t/b[3])
		c7, s7 := math.Cos(t/b[6]), math.Sin(t/b[6])
		g[0], g[1], g[2] = 1, c1, s1
		g[3] = (b[4]*s4 - b[5]*c4) * t / (b[3] * b[3])
		g[4], g[5] = c4, s4
		g[6] = (b[7]*s7 - b[8]*c7) * t / (b[6] * b[6])
		g[7], g[8] = c7, s7
		return b[0] + b[1]*c1 + b[2]*s1 + b[4]*c4 + b[5]*s4 + b[7]*c7 + b[8]*s7
	},
	"Eckerle4": func(g, b, x []float64) float64 {
		t := (x[0] - b[2]) / b[1]
		e := math.Exp(-0.5 * t * t)
		f := b[0] / b[1] * e
		g[0] = e / b[1]
		g[1] = f * (t*t - 1) / b[1]
		g[2] = f * t / b[1]
		return f
	},
	"Gauss1":  gauss,
	"Gauss2":  gauss,
	"Gauss3":  gauss,
	"Hahn1":   cubicRational,
	"Thurber": cubicRational,
	"Kirby2": func(g, b, x []float64) float64 {
		v := x[0]
		num := b[0] + b[1]*v + b[2]*v*v
		den := 1 + b[3]*v + b[4]*v*v
		g[0], g[1], g[2] = 1/den, v/den, v*v/den
		g[3] = -num * v / (den * den)
		g[4] = -num * v * v / (den * den)
		return num / den
	},
	"Lanczos1": lanczos,
	"Lanczos2": lanczos,
	"Lanczos3": lanczos,
	"MGH09": func(g, b, x []float64) float64 {
		v := x[0]
		num := v*v + v*b[1]
		den := v*v + v*b[2] + b[3]
		g[0] = num / den
		g[1] = b[0] * v / den
		g[2] = -b[0] * num * v / (den * den)
		g[3] = -b[0] * num / (den * den)
		return b[0] * num / den
	},
	"MGH10": func(g, b, x []float64) float64 {
		u := x[0] + b[2]
		e := math.Exp(b[1] / u)
		g[0] = e
		g[1] = b[0] * e / u
		g[2] = -b[0] * e * b[1] / (u * u)
		return b[0] * e
	},
	"MGH17": func(g, b, x []float64) float64 {
		e4, e5 := math.Exp(-x[0]*b[3]), math.Exp(-x[0]*b[4])
		g[0], g[1], g[2] = 1, e4, e5
		g[3] = -b[1] * x[0] * e4
		g[4] = -b[2] * x[0] * e5
		return b[0] + b[1]*e4 + b[2]*e5
	},
	"Misra1b": func(g, b, x []float64) float64 {
		u := 1 + b[1]*x[0]/2
		g[0] = 1 - 1/(u*u)
		g[1] = b[0] * x[0] / (u * u * u)
		return b[0] * g[0]
	},
	"Misra1c": func(g, b, x []float64) float64 {
		u := 1 + 2*b[1]*x[0]
		g[0] = 1 - 1/math.Sqrt(u)
		g[1] = b[0] * x[0] / (u * math.Sqrt(u))
		return b[0] * g[0]
	},
	"Misra1d": func(g, b, x []float64) float64 {
		u := 1 + b[1]*x[0]
		g[0] = b[1] * x[0] / u
		g[1] = b[0] * x[0] / (u * u)
		return b[0] * g[0]
	},
	// Nelson's model is stated for log[y]; the caller takes the log of y.
	"Nelson": func(g, b, x []float64) float64 {
		e := math.Exp(-b[2] * x[1])
		g[0] = 1
		g[1] = -x[0] * e
		g[2] = b[1] * x[0] * x[1] * e
		return b[0] - b[1]*x[0]*e
	},
	"Rat42": func(g, b, x []float64) float64 {
		e := math.Exp(b[1] - b[2]*x[0])
		u := 1 + e
		g[0] = 1 / u
		g[1] = -b[0] * e / (u * u)
		g[2] = b[0] * e * x[0] / (u * u)
		return b[0] / u
	},
	"Rat43": func(g, b, x []float64) float64 {
		e := math.Exp(b[1] - b[2]*x[0])
		u := 1 + e
		p := math.Pow(u, -1/b[3])
		g[0] = p
		g[1] = -b[0] / b[3] * p / u * e
		g[2] = b[0] / b[3] * p / u * e * x[0]
		g[3] = b[0] * p * math.Log(u) / (b[3] * b[3])
		return b[0] * p
	},
	"Roszman1": func(g, b, x []float64) float64 {
		d := x[0] - b[3]
		v := b[2] / d
		at := 1 / (1 + v*v)
		g[0] = 1
		g[1] = -x[0]
		g[2] = -at / d / math.Pi
		g[3] = -at * b[2] / (d * d) / math.Pi
		return b[0] - b[1]*x[0] - math.Atan(v)/math.Pi
	},
}

func expRise(g, b, x []float64) float64 {
	e := math.Exp(-b[1] * x[0])
	g[0] = 1 - e
	g[1] = b[0] * x[0] * e
	return b[0] * (1 - e)
}

func chwirut(g, b, x []float64) float64 {
	e := math.Exp(-b[0] * x[0])
	u := b[1] + b[2]*x[0]
	g[0] = -x[0] * e / u
	g[1] = -e / (u * u)
	g[2] = -x[0] * e / (u * u)
	return e / u
}

func gauss(g, b, x []float64) float64 {
	v := x[0]
	e1 := math.Exp(-b[1] * v)
	d4, d7 := v-b[3], v-b[6]
	e2 := math.Exp(-d4 * d4 / (b[4] * b[4]))
	e3 := math.Exp(-d7 * d7 / (b[7] * b[7]))
	g[0], g[1] = e1, -b[0]*v*e1
	g[2] = e2
	g[3] = b[2] * e2 * 2 * d4 / (b[4] * b[4])
	g[4] = b[2] * e2 * 2 * d4 * d4 / (b[4] * b[4] * b[4])
	g[5] = e3
	g[6] = b[5] * e3 * 2 * d7 / (b[7] * b[7])
	g[7] = b[5] * e3 * 2 * d7 * d7 / (b[7] * b[7] * b[7])
	return b[0]*e1 + b[2]*e2 + b[5]*e3
}

func cubicRational(g, b, x []float64) float64 {
	v := x[0]
	num := b[0] + b[1]*v + b[2]*v*v + b[3]*v*v*v
	den := 1 + b[4]*v + b[5]*v*v + b[6]*v*v*v
	g[0], g[1], g[2], g[3] = 1/den, v/den, v*v/den, v*v*v/den
	q := -num / (den * den)
	g[4], g[5], g[6] = q*v, q*v*v, q*v*v*v
	return num / den
}

func lanczos(g, b, x []float64) float64 {
	s := 0.0
	for k := 0; k < 3; k++ {
		e := math.Exp(-b[2*k+1] * x[0])
		g[2*k] = e
		g[2*k+1] = -b[2*k] * x[0] * e
		s += b[2*k] * e
	}
	return s
}

// nistData is one parsed StRD file.
type nistData struct {
	name           string
	start1, start2 []float64
	cert, certSD   []float64
	rss            float64
	y              []float64
	x              [][]float64
}

// parseNIST reads the StRD .dat layout described in the folder's
// PROVENANCE.md: parameter lines "bK = start1 start2 certified sd" from
// line 41, then "Residual Sum of Squares:", and data (y x…) from line 61.
func parseNIST(path string) (*nistData, error) {
	fh, err := os.Open(path)
	if err != nil {
		return nil, err
	}
	defer fh.Close()
	d := &nistData{name: strings.TrimSuffix(filepath.Base(path), ".dat")}
	sc := bufio.NewScanner(fh)
	for line := 1; sc.Scan(); line++ {
		fields := strings.Fields(sc.Text())
		switch {
		case line >= 41 && len(fields) == 6 && fields[1] == "=" && strings.HasPrefix(fields[0], "b"):
			v := make([]float64, 4)
			for i := range v {
				if v[i], err = strconv.ParseFloat(fields[2+i], 64); err != nil {
					return nil, fmt.Errorf("line %d: %w", line, err)
				}
			}
			d.start1 = append(d.start1, v[0])
			d.start2 = append(d.start2, v[1])
			d.cert = append(d.cert, v[2])
			d.certSD = append(d.certSD, v[3])
		case strings.HasPrefix(sc.Text(), "Residual Sum of Squares:"):
			if d.rss, err = strconv.ParseFloat(fields[len(fields)-1], 64); err != nil {
				return nil, fmt.Errorf("line %d: %w", line, err)
			}
		case line >= 61 && len(fields) >= 2:
			v := make([]float64, len(fields))
			for i := range v {
				if v[i], err = strconv.ParseFloat(fields[i], 64); err != nil {
					return nil, fmt.Errorf("line %d: %w", line, err)
				}
			}
			d.y = append(d.y, v[0])
			d.x = append(d.x, v[1:])
		}
	}
	if err := sc.Err(); err != nil {
		return nil, err
	}
	if len(d.cert) == 0 || len(d.y) == 0 || d.rss == 0 {
		return nil, fmt.Errorf("%s: incomplete StRD file", path)
	}
	if d.name == "Nelson" {
		for i := range d.y {
			d.y[i] = math.Log(d.y[i])
		}
	}
	return d, nil
}

// problem returns the least-squares problem f(b) = model(b) − y.
func (d *nistData) problem(model nistModel) *Problem {
	n := len(d.cert)
	g := make([]float64, n)
	return &Problem{
		M: len(d.y),
		Func: func(dst, b []float64) {
			for i := range d.y {
				dst[i] = model(g, b, d.x[i]) - d.y[i]
			}
		},
		Jac: func(dst *mat.Dense, b []float64) {
			for i := range d.y {
				model(g, b, d.x[i])
				dst.SetRow(i, g)
			}
		},
	}
}

// repoRoot walks up from the working directory to the folder holding go.mod.
func repoRoot(t testing.TB) string {
	dir, err := os.Getwd()
	if err != nil {
		t.Fatal(err)
	}
	for {
		if _, err := os.Stat(filepath.Join(dir, "go.mod")); err == nil {
			return dir
		}
		up := filepath.Dir(dir)
		if up == dir {
			t.Fatal("go.mod not found above the test directory")
		}
		dir = up
	}
}

func nistFiles(t *testing.T) []string {
	dir := filepath.Join(repoRoot(t), "..", "shared", "reference", "nist-strd")
	files, _ := filepath.Glob(filepath.Join(dir, "*.dat"))
	if len(files) == 0 {
		t.Skipf("NIST StRD data not found in %s (the shared reference folder is absent); skipping", dir)
	}
	return files
}

// lre is the log relative error of McCullough (1998, "Assessing the
// reliability of statistical software", The American Statistician 52(4)):
// −log₁₀(|x − c|/|c|), capped at the 11 certified digits.
func lre(x, c float64) float64 {
	if x == c {
		return 11
	}
	v := -math.Log10(math.Abs(x-c) / math.Abs(c))
	if math.IsNaN(v) || v < 0 {
		return 0
	}
	return math.Min(v, 11)
}

// TestNISTJacobians checks each hand-written model gradient against
// central finite differences (gonum diff/fd) at the certified values.
func TestNISTJacobians(t *testing.T) {
	for _, path := range nistFiles(t) {
		d, err := parseNIST(path)
		if err != nil {
			t.Fatal(err)
		}
		t.Run(d.name, func(t *testing.T) {
			model, ok := nistModels[d.name]
			if !ok {
				t.Fatalf("no model for %s", d.name)
			}
			p := d.problem(model)
			n, m := len(d.cert), len(d.y)
			// Differentiate in relative parameters b = b₀ ⊙ (1 + u), so the
			// finite-difference step suits each parameter's magnitude.
			b0 := d.cert
			b := make([]float64, n)
			scaled := func(dst, u []float64) {
				for j := range b {
					b[j] = b0[j] * (1 + u[j])
				}
				p.Func(dst, b)
			}
			want := mat.NewDense(m, n, nil)
			fd.Jacobian(want, scaled, make([]float64, n), &fd.JacobianSettings{Formula: fd.Central, Step: 1e-6})
			got := mat.NewDense(m, n, nil)
			p.Jac(got, b0)
			for j := 0; j < n; j++ {
				col := mat.Norm(want.ColView(j), math.Inf(1))
				for i := 0; i < m; i++ {
					g, w := got.At(i, j)*b0[j], want.At(i, j)
					if math.Abs(g-w) > 1e-6*col {
						t.Fatalf("J[%d,%d]·b%d: got %v, want %v (finite differences)", i, j, j+1, g, w)
					}
				}
			}
		})
	}
}

// nistMode1Failures lists dataset/start pairs where automatic scaling is
// known to fail in MINPACK as well (see TestNIST).
var nistMode1Failures = map[string]bool{"BoxBOD/start1": true}

// TestNIST fits every NIST StRD nonlinear regression dataset from both
// certified starting points and demands LRE ≥ 6 for every parameter and for
// the residual sum of squares. Source of the certified values: the StRD
// files themselves (NIST/ITL, via ../shared/reference/nist-strd).
//
// Lanczos1's certified RSS (1.4e-25) is below what double precision can
// represent for residuals of data given to 13 digits (PROVENANCE.md: the
// certified parameters themselves give 4e-21), so for Lanczos1 only the
// parameters are compared.
//
// BoxBOD from start 1 is a documented failure of MINPACK's automatic column
// scaling (mode 1): the first step sends b2 to about 111, where exp(−b2·x)
// underflows the b2 column, and the iteration stops at b = (172.5, 110.95).
// SciPy's MINPACK (least_squares method='lm', x_scale='jac') stops at the
// same point (fit/testdata/README.md). For it the test repeats the fit with
// unit scaling (mode 2) and demands the certified values from that run.
func TestNIST(t *testing.T) {
	set := &Settings{FTol: 1e-15, XTol: 1e-15, MaxEvaluations: 5000}
	var table strings.Builder
	fmt.Fprintf(&table, "%-9s %5s %8s %8s %-14s %5s\n", "dataset", "start", "min LRE b", "LRE RSS", "status", "nfev")
	for _, path := range nistFiles(t) {
		d, err := parseNIST(path)
		if err != nil {
			t.Fatal(err)
		}
		for si, start := range [][]float64{d.start1, d.start2} {
			t.Run(fmt.Sprintf("%s/start%d", d.name, si+1), func(t *testing.T) {
				res, err := LevenbergMarquardt(d.problem(nistModels[d.name]), start, set)
				if err != nil {
					t.Fatal(err)
				}
				minB := 11.0
				for j, c := range d.cert {
					minB = math.Min(minB, lre(res.X[j], c))
				}
				rssLRE := lre(res.Cost, d.rss)
				fmt.Fprintf(&table, "%-9s %5d %8.1f %8.1f %-14v %5d\n", d.name, si+1, minB, rssLRE, res.Status, res.Evaluations)
				if key := fmt.Sprintf("%s/start%d", d.name, si+1); nistMode1Failures[key] && minB < 6 {
					// Documented failure of automatic scaling: retry with
					// unit scaling (MINPACK mode 2, SciPy's default).
					ones := make([]float64, len(start))
					for j := range ones {
						ones[j] = 1
					}
					s2 := *set
					s2.ScaleDiag = ones
					if res, err = LevenbergMarquardt(d.problem(nistModels[d.name]), start, &s2); err != nil {
						t.Fatal(err)
					}
					minB = 11.0
					for j, c := range d.cert {
						minB = math.Min(minB, lre(res.X[j], c))
					}
					rssLRE = lre(res.Cost, d.rss)
					fmt.Fprintf(&table, "%-9s %5s %8.1f %8.1f %-14v %5d  (unit ScaleDiag)\n", d.name, "1", minB, rssLRE, res.Status, res.Evaluations)
				}
				if minB < 6 {
					t.Errorf("parameters: min LRE %.1f < 6; got %v, want %v (status %v)", minB, res.X, d.cert, res.Status)
				}
				if d.name != "Lanczos1" && rssLRE < 6 {
					t.Errorf("RSS: LRE %.1f < 6; got %v, want %v", rssLRE, res.Cost, d.rss)
				}
			})
		}
	}
	t.Logf("digits achieved (LRE, McCullough 1998):\n%s", table.String())
}
