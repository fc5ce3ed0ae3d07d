package analysis

import (
	"math"
	"slices"

	"gonum.org/v1/gonum/mat"
)

// fitProblem is a least-squares problem: residuals of parameters theta,
// each held within [lo, hi].
type fitProblem struct {
	lo, hi    []float64
	residuals func(theta, dst []float64) []float64
	// jacobian, where set, fills jac[j] with the derivatives of the
	// residuals by theta[j]; else they are taken by forward differences.
	jacobian func(theta []float64, jac [][]float64)
}

// cost is the sum of squared residuals.
func cost(r []float64) float64 {
	s := 0.0
	for _, v := range r {
		s += v * v
	}
	return s
}

// lmTolerance ends a fit once a step improves the cost by less than this
// share of it.
const lmTolerance = 1e-6

// levenberg minimises the sum of squared residuals from theta, which it
// updates, by the Levenberg–Marquardt method (K. Levenberg 1944,
// D. W. Marquardt 1963): Gauss–Newton steps on the Jacobian (forward
// differences unless the problem gives it), damped by λ·diag(JᵀJ), with
// parameters on a bound held there when the step would cross it. At most
// iterations steps are taken. It returns the final cost.
func levenberg(prob fitProblem, theta []float64, iterations int) float64 {
	n := len(theta)
	r := prob.residuals(theta, nil)
	c := cost(r)
	jac := make([][]float64, n)
	trial := make([]float64, n)
	var rt []float64
	lambda := 1e-3
	a := make([]float64, n*n)
	g := make([]float64, n)
	for range iterations {
		for j := range n {
			if prob.jacobian != nil {
				break
			}
			copy(trial, theta)
			h := 1e-6 * max(math.Abs(theta[j]), 1e-3)
			if trial[j]+h > prob.hi[j] {
				h = -h
			}
			trial[j] += h
			jac[j] = prob.residuals(trial, jac[j])
			for i := range jac[j] {
				jac[j][i] = (jac[j][i] - r[i]) / h
			}
		}
		if prob.jacobian != nil {
			for j := range n {
				if len(jac[j]) != len(r) {
					jac[j] = make([]float64, len(r))
				}
			}
			prob.jacobian(theta, jac)
		}
		for j := range n {
			g[j] = 0
			for i, v := range r {
				g[j] += jac[j][i] * v
			}
			for k := range n {
				s := 0.0
				for i := range r {
					s += jac[j][i] * jac[k][i]
				}
				a[j*n+k] = s
			}
		}
		improved := false
		for lambda < 1e10 {
			step, ok := boundedStep(prob, theta, a, g, lambda)
			if !ok {
				lambda *= 10
				continue
			}
			for j := range n {
				trial[j] = min(prob.hi[j], max(prob.lo[j], theta[j]-step[j]))
			}
			rt = prob.residuals(trial, rt)
			if ct := cost(rt); ct < c {
				done := c-ct < lmTolerance*c
				copy(theta, trial)
				r, rt = rt, r
				c = ct
				lambda = max(lambda/10, 1e-9)
				improved = true
				if done {
					return c
				}
				break
			}
			lambda *= 10
		}
		if !improved {
			break
		}
	}
	return c
}

// boundedStep is the damped Gauss–Newton step from theta, taken with the
// parameters that sit on a bound and would step past it held where they
// are: clamping them instead would bend the others' step off its
// descent, and the fit would stall there.
func boundedStep(prob fitProblem, theta, a, g []float64, lambda float64) ([]float64, bool) {
	n := len(theta)
	held := make([]bool, n)
	for {
		aa, gg := slices.Clone(a), slices.Clone(g)
		for j := range n {
			if !held[j] {
				continue
			}
			for k := range n {
				aa[j*n+k], aa[k*n+j] = 0, 0
			}
			aa[j*n+j], gg[j] = 1, 0
		}
		step, ok := solveDamped(aa, gg, lambda, n)
		if !ok {
			return nil, false
		}
		blocked := false
		for j := range n {
			// The new value is theta − step.
			if !held[j] && (theta[j] <= prob.lo[j] && step[j] > 0 || theta[j] >= prob.hi[j] && step[j] < 0) {
				held[j], blocked = true, true
			}
		}
		if !blocked {
			return step, true
		}
	}
}

// solveDamped solves (A + λ·diag(A))·x = g, A = JᵀJ being n×n and
// row-major, by gonum's Cholesky factorisation; ok is false where the
// damped matrix is not positive definite, which more damping cures.
func solveDamped(a, g []float64, lambda float64, n int) (x []float64, ok bool) {
	sym := mat.NewSymDense(n, nil)
	for i := range n {
		for k := i; k < n; k++ {
			v := a[i*n+k]
			if i == k {
				v += lambda*v + 1e-300
			}
			sym.SetSym(i, k, v)
		}
	}
	var chol mat.Cholesky
	if !chol.Factorize(sym) {
		return nil, false
	}
	var step mat.VecDense
	if err := chol.SolveVecTo(&step, mat.NewVecDense(n, append([]float64(nil), g...))); err != nil {
		// A mere warning that the system is ill-conditioned still
		// leaves a step; anything else does not.
		if _, warning := err.(mat.Condition); !warning {
			return nil, false
		}
	}
	return step.RawVector().Data, true
}
