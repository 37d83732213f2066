package fit

import (
	"errors"
	"math"
	"testing"

	"gonum.org/v1/gonum/mat"
)

func rosenbrock() *Problem {
	p := mghProblems[0]
	return &Problem{M: p.m, Func: p.f, Jac: p.jac}
}

func TestLMStatus(t *testing.T) {
	tests := []struct {
		name    string
		set     *Settings
		want    Status
		wantErr bool
	}{
		{"defaults", nil, ZeroResidual, false},
		{"evaluation cap", &Settings{MaxEvaluations: 3}, MaxEvaluations, true},
		{"gtol", &Settings{GTol: 0.5}, GTolConverged, false},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			res, err := LevenbergMarquardt(rosenbrock(), []float64{-1.2, 1}, tc.set)
			if err != nil {
				t.Fatal(err)
			}
			if res.Status != tc.want {
				t.Errorf("got %v, want %v", res.Status, tc.want)
			}
			if err := res.Status.Err(); (err != nil) != tc.wantErr || (err != nil && !errors.Is(err, ErrNotConverged)) {
				t.Errorf("Err: got %v, want error %v wrapping ErrNotConverged", err, tc.wantErr)
			}
		})
	}
	if s := Status(99).String(); s != "Status(99)" {
		t.Errorf("unknown status: got %q", s)
	}
}

func TestLMNonFiniteStart(t *testing.T) {
	p := &Problem{M: 2, Func: func(dst, x []float64) { dst[0], dst[1] = math.NaN(), 1 }, Jac: func(*mat.Dense, []float64) {}}
	if _, err := LevenbergMarquardt(p, []float64{1}, nil); err == nil {
		t.Error("got nil error for NaN residuals at the start, want an error")
	}
}

func TestLMMisusePanics(t *testing.T) {
	defer func() {
		if r := recover(); r == nil {
			t.Error("got no panic for a Problem without Func, want one")
		}
	}()
	LevenbergMarquardt(&Problem{M: 1}, []float64{1}, nil)
}

// TestLMNormalPath: on a well-conditioned problem (NIST Misra1a) the
// normal-equation path reaches the same solution as the QR path.
func TestLMNormalPath(t *testing.T) {
	var d *nistData
	for _, path := range nistFiles(t) {
		if dd, err := parseNIST(path); err == nil && dd.name == "Misra1a" {
			d = dd
		}
	}
	if d == nil {
		t.Skip("Misra1a.dat not found")
	}
	qr := d.problem(nistModels["Misra1a"])
	jac := mat.NewDense(qr.M, 2, nil)
	normal := &Problem{M: qr.M, Func: qr.Func, Normal: func(jtj *mat.SymDense, jtf, x []float64) {
		qr.Jac(jac, x)
		f := make([]float64, qr.M)
		qr.Func(f, x)
		var a mat.Dense
		a.Mul(jac.T(), jac)
		for i := 0; i < 2; i++ {
			for j := i; j < 2; j++ {
				jtj.SetSym(i, j, a.At(i, j))
			}
			jtf[i] = mat.Dot(jac.ColView(i), mat.NewVecDense(qr.M, f))
		}
	}}
	set := &Settings{FTol: 1e-15, XTol: 1e-15}
	r1, _ := LevenbergMarquardt(qr, d.start1, set)
	r2, _ := LevenbergMarquardt(normal, d.start1, set)
	for j := range r1.X {
		if lre(r2.X[j], d.cert[j]) < 6 || math.Abs(r1.X[j]-r2.X[j]) > 1e-8*math.Abs(r1.X[j]) {
			t.Errorf("b%d: normal path %v, QR path %v, certified %v", j+1, r2.X[j], r1.X[j], d.cert[j])
		}
	}
}
