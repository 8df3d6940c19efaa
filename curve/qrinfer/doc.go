// Package qrinfer fits linear quantile regressions with covariates and gives
// each coefficient a standard error, a confidence interval and a p-value.
//
// For responses y_i, design rows x_i (for example a B-spline basis in age
// followed by numeric covariates and indicators of categories, see
// AgeDesign) and tau in (0,1), the estimate is the exact solution of
//
//	minimise  sum_i rho_tau(y_i - x_i'b),   rho_tau(u) = u (tau - 1{u<0}),
//
// by growband/curve/solver. Its asymptotic covariance is the sandwich
//
//	tau (1 - tau) H^-1 J H^-1,   J = sum_i x_i x_i',   H = sum_i f_i(0) x_i x_i',
//
// where f_i(0) is the density of the i-th error at its tau-quantile. Three
// methods estimate it, and every Result names the one used:
//
//   - MethodSandwich: f_i from the difference quotient of the fitted
//     quantiles at tau ± h with the Hall–Sheather bandwidth h (Hendricks &
//     Koenker 1992; Koenker 2005, section 3.4), which allows the spread to
//     vary with x (heteroscedasticity);
//   - MethodPowell: H by Powell's kernel estimator, sum of the x_i x_i' of
//     residuals within ±c of zero divided by 2c (uniform kernel), with c
//     from the Hall–Sheather bandwidth on the scale of the residuals;
//   - MethodBootstrap: the standard deviation of the estimate over samples
//     that resample whole subjects (clusters) with replacement, which also
//     allows errors within a subject to be dependent.
//
// Intervals are estimate ± z_(1+level)/2 · SE and p-values two-sided for the
// hypothesis that the coefficient is zero, both from the normal limit.
//
// References:
//   - Koenker R, Bassett G (1978). Regression quantiles. Econometrica 46,
//     33–50.
//   - Hall P, Sheather S J (1988). On the distribution of a studentized
//     quantile. Journal of the Royal Statistical Society B 50, 381–391.
//   - Hendricks W, Koenker R (1992). Hierarchical spline models for
//     conditional quantiles and the demand for electricity. Journal of the
//     American Statistical Association 87, 58–68.
//   - Powell J L (1991). Estimation of monotonic regression models under
//     quantile restrictions. In Nonparametric and Semiparametric Methods in
//     Econometrics, Cambridge University Press, 357–384.
//   - Koenker R (2005). Quantile Regression. Cambridge University Press.
//   - Efron B, Tibshirani R J (1993). An Introduction to the Bootstrap.
//     Chapman & Hall (resampling clusters).
package qrinfer
