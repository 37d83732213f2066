package fit

import (
	"encoding/json"
	"math"

	"gonum.org/v1/gonum/mat"
)

// saddleJSON is the JSON form of SaddleResult (the fit.json schema).
type saddleJSON struct {
	K1               estimateJSON   `json:"k1"`
	K2               estimateJSON   `json:"k2"`
	Origin           originJSON     `json:"origin"`
	Axes             [3][3]float64  `json:"axes"`
	AxesURad         [3]jf          `json:"axes_u_rad"`
	RMSMM            float64        `json:"rms_mm"`
	SigmaMM          float64        `json:"sigma_mm"`
	ThresholdMM      float64        `json:"threshold_mm"`
	Inliers          int            `json:"inliers"`
	Outliers         int            `json:"outliers"`
	QuadricClass     string         `json:"quadric_class"`
	Quadric          quadricJSON    `json:"quadric"`
	Solver           solverJSON     `json:"solver"`
	Covariance       covarianceJSON `json:"covariance"`
	Correlation      [][]jf         `json:"correlation"`
	Intervals        intervalsJSON  `json:"intervals"`
	Pivot            [3]float64     `json:"pivot"`
	Seed             uint64         `json:"seed"`
	RANSACIterations int            `json:"ransac_iterations"`
	Rounds           int            `json:"rounds"`
	Robust           robustJSON     `json:"robust"`
}

// jf is a float64 that is written as null when it is NaN or infinite,
// which JSON cannot carry.
type jf float64

func (v jf) MarshalJSON() ([]byte, error) {
	f := float64(v)
	if math.IsNaN(f) || math.IsInf(f, 0) {
		return []byte("null"), nil
	}
	return json.Marshal(f)
}

type estimateJSON struct {
	Value jf `json:"value"`
	U     jf `json:"u"`
	Lo95  jf `json:"lo95"`
	Hi95  jf `json:"hi95"`
}

func estJSON(e Estimate) estimateJSON {
	return estimateJSON{jf(e.Value), jf(e.U), jf(e.Lo95), jf(e.Hi95)}
}

type originJSON struct {
	Value [3]float64 `json:"value"`
	U     [3]jf      `json:"u"`
	Lo95  [3]jf      `json:"lo95"`
	Hi95  [3]jf      `json:"hi95"`
}

type quadricJSON struct {
	RankE int        `json:"rank_e"`
	RankA int        `json:"rank_a"`
	EigE  [3]float64 `json:"eig_e"`
	DetA  float64    `json:"det_a"`
}

type solverJSON struct {
	Status      string  `json:"status"`
	Iterations  int     `json:"iterations"`
	Evaluations int     `json:"evaluations"`
	Cost        float64 `json:"cost_m2"`
}

type covarianceJSON struct {
	Params    []string `json:"params"`
	Matrix    [][]jf   `json:"matrix"`
	OriginXYZ [][]jf   `json:"origin_xyz"`
	Note      string   `json:"note"`
}

type intervalsJSON struct {
	Level float64 `json:"level"`
	T     float64 `json:"t"`
	DOF   int     `json:"dof"`
}

type robustJSON struct {
	Method     string `json:"method"`
	Iterations int    `json:"iterations"`
}

// MarshalJSON writes the fit.json form: k1 and k2 as
// {"value", "u", "lo95", "hi95"} in 1/m, the origin (saddle point, site
// metres) with its uncertainties, the axes as three unit vectors (rows),
// RMS, σ̂ and threshold in millimetres, inlier and outlier counts, the
// quadric class, the solver status, the parameter covariance (names in
// "params": k1, k2 in 1/m; rot_x…rot_z in rad; t_x…t_z in m, local frame
// about the pivot), the correlation matrix and the interval definition.
// Uncertainties that are not finite (an undetermined parameter) are
// written as null.
func (r *SaddleResult) MarshalJSON() ([]byte, error) {
	j := saddleJSON{
		K1: estJSON(r.K1), K2: estJSON(r.K2),
		RMSMM: 1e3 * r.RMS, SigmaMM: 1e3 * r.Sigma, ThresholdMM: 1e3 * r.Threshold,
		Inliers: r.NumInliers, Outliers: r.NumOutliers,
		QuadricClass: r.Class.Kind.String(),
		Quadric:      quadricJSON{RankE: r.Class.RankE, RankA: r.Class.RankA, EigE: r.Class.EigE, DetA: r.Class.DetA},
		Solver:       solverJSON{Status: r.Solver.Status.String(), Iterations: r.Solver.Iterations, Evaluations: r.Solver.Evaluations, Cost: r.Solver.Cost},
		Correlation:  symRows(r.ParCorr),
		Intervals:    intervalsJSON{Level: 0.95, T: r.TQuantile, DOF: r.DOF},
		Pivot:        [3]float64{r.Pivot.X, r.Pivot.Y, r.Pivot.Z},
		Seed:         r.Seed, RANSACIterations: r.RANSACIterations, Rounds: r.Rounds,
		Robust: robustJSON{Method: r.Robust, Iterations: r.IRLSIterations},
	}
	for i := 0; i < 3; i++ {
		a := r.Saddle.Axes[i]
		j.Axes[i] = [3]float64{a.X, a.Y, a.Z}
		j.Origin.Value[i] = r.Origin[i].Value
		j.Origin.U[i] = jf(r.Origin[i].U)
		j.Origin.Lo95[i] = jf(r.Origin[i].Lo95)
		j.Origin.Hi95[i] = jf(r.Origin[i].Hi95)
		j.AxesURad[i] = jf(r.AxesU[i])
	}
	j.Covariance = covarianceJSON{
		Params:    SaddleParamNames[:],
		Matrix:    symRows(r.ParCov),
		OriginXYZ: symRows(r.OriginCov),
		Note:      "rot_* and t_* are a small rotation (rad) and translation (m) in the fitted local frame about the pivot",
	}
	return json.Marshal(j)
}

// symRows returns the rows of a symmetric matrix (nil for nil).
func symRows(s *mat.SymDense) [][]jf {
	if s == nil {
		return nil
	}
	n := s.SymmetricDim()
	rows := make([][]jf, n)
	for i := range rows {
		rows[i] = make([]jf, n)
		for k := range rows[i] {
			rows[i][k] = jf(s.At(i, k))
		}
	}
	return rows
}
