// Package curve builds age-indexed growth references from measurements and
// scores new measurements against them.
//
// Each centile curve is a quantile regression on a cubic B-spline basis in a
// transformed age t = T(age):
//
//	Q_tau(age) = B(T(age))' b_tau
//
// fitted by curve/solver. Because B-spline functions are non-negative and sum
// to one, coefficients ordered across tau (b_tau_k <= b_tau_k+1 componentwise)
// make the curves ordered at every age: non-crossing is imposed as solver
// constraints, not checked afterwards. A measurement is scored by locating it
// among the fitted quantiles of the dense tau grid at its age and mapping the
// interpolated level to a z-score, z = Phi^-1(centile).
//
// Build is the whole pipeline that `growband build` runs: the robust
// implausibility screen (RobustZ), the age scale chosen from the data
// (ChooseAgeScale), Fit, and the edge checks (CheckEdges). Non-crossing,
// smoothness choice, the sample-size guard and the bootstrap bands are
// documented on NonCrossConstrain, Smoothness, Flag and Band.
package curve
