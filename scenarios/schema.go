package scenarios

// The types in this file are the scenario file format. Each field's yaml
// tag is its key; its comment gives the meaning, the default and the valid
// values. README.md's format reference is written from these comments.

// Scenario is one Monte Carlo study: a data-generating model, the
// estimators to compare on it, and the sweeps that make it a grid of cells.
type Scenario struct {
	// Name identifies the scenario in results and output file names:
	// letters, digits, '.', '_' and '-', not starting with '.'. Default:
	// the file name without its extension.
	Name string `yaml:"name" json:"name"`
	// About is free text describing the scenario.
	About string `yaml:"about" json:"about,omitempty"`
	// Seed is the root of every random stream of the study. Default 1.
	Seed uint64 `yaml:"seed" json:"seed"`
	// Replicates is the number of simulated datasets per cell. Default 1000.
	Replicates int `yaml:"replicates" json:"replicates"`
	// Model is the clean data-generating model.
	Model Model `yaml:"model" json:"model"`
	// Noise is the error distribution of the clean observations.
	Noise Noise `yaml:"noise" json:"noise"`
	// Contamination lists the kinds of bad data mixed in; empty means clean.
	Contamination []Contamination `yaml:"contamination" json:"contamination,omitempty"`
	// Estimators lists the fits to compare; every one fits the same datasets.
	Estimators []EstimatorSpec `yaml:"estimators" json:"estimators"`
	// Reference is the label of the estimator that relative efficiencies
	// are measured against. Default: the first least-squares estimator, or
	// else the first estimator.
	Reference string `yaml:"reference" json:"reference"`
	// Breakdown says how to read the sweeps as bias curves: which swept
	// field is the contamination fraction, which sweeps place the
	// contamination (the worst of them is reported), and the bias beyond
	// which an estimator counts as broken down.
	Breakdown *Breakdown `yaml:"breakdown" json:"breakdown,omitempty"`
	// Vary sweeps fields over lists of values: a mapping from a field path
	// (for example contamination.spikes.fraction) to the list of values it
	// takes. The study runs the cross product of all lists, one cell per
	// combination, the first path varying slowest.
	Vary Vary `yaml:"vary" json:"vary,omitempty"`
}

// Breakdown configures bias curves and empirical breakdown.
type Breakdown struct {
	// Fraction is the swept path of the contamination fraction. Default:
	// the only swept path ending in ".fraction".
	Fraction string `yaml:"fraction" json:"fraction"`
	// WorstOver lists swept paths (positions of point-mass contamination,
	// for example contamination.far.at and contamination.far.response)
	// over which the largest bias is reported for each fraction.
	WorstOver []string `yaml:"worst-over" json:"worst_over,omitempty"`
	// Threshold is the norm of the slope bias beyond which an estimator is
	// said to have broken down; the smallest fraction past it is reported,
	// with the rate of replicates whose slope error exceeds it. Default 0:
	// not reported.
	Threshold float64 `yaml:"threshold" json:"threshold,omitempty"`
}

// Model is the clean linear model y = intercept + Σ slope_j x_j + noise.
type Model struct {
	// N is the number of observations per dataset; it must exceed the
	// number of coefficients.
	N int `yaml:"n" json:"n"`
	// Intercept is the true intercept, or none for a model without one.
	// Default 0.
	Intercept Intercept `yaml:"intercept" json:"intercept"`
	// Columns are the predictors, each with its true slope and distribution.
	Columns []Column `yaml:"columns" json:"columns"`
	// Correlation correlates the predictors through a Gaussian copula: one
	// number for every pair, or a full correlation matrix. Every column must
	// then be random (not levels or grid). Default: independent.
	Correlation Correlation `yaml:"correlation" json:"correlation,omitempty"`
}

// Column is one predictor of the model.
type Column struct {
	// Name names the coefficient in results; not "intercept".
	Name string `yaml:"name" json:"name"`
	// Slope is the true coefficient of the column. Default 0.
	Slope float64 `yaml:"slope" json:"slope"`
	// Distribution says how the column's values are drawn.
	Distribution `yaml:",inline" json:"distribution"`
}

// Distribution is a distribution of a predictor column, chosen by Dist, with
// the parameters that distribution takes (others are refused):
//
//	normal       mean (0), sd (1)
//	uniform      min (0), max (1)
//	student-t    df (required), mean (0), scale (1)
//	laplace      mean (0), scale (1)
//	lognormal    meanlog (0), sdlog (1)
//	exponential  rate (1)
//	levels       levels (required): row i takes levels[i mod len], a fixed design
//	grid         min (0), max (1): n equally spaced values, a fixed design
type Distribution struct {
	// Dist is the distribution: normal, uniform, student-t, laplace,
	// lognormal, exponential, levels or grid. Default normal.
	Dist ColumnDist `yaml:"dist" json:"dist"`
	// Mean is the location of normal, student-t and laplace. Default 0.
	Mean *float64 `yaml:"mean" json:"mean,omitempty"`
	// SD is the standard deviation of normal; positive. Default 1.
	SD *float64 `yaml:"sd" json:"sd,omitempty"`
	// Min is the lower end of uniform and grid. Default 0.
	Min *float64 `yaml:"min" json:"min,omitempty"`
	// Max is the upper end of uniform and grid; it must exceed min.
	// Default 1.
	Max *float64 `yaml:"max" json:"max,omitempty"`
	// DF is the degrees of freedom of student-t; positive, required.
	DF *float64 `yaml:"df" json:"df,omitempty"`
	// Scale is the scale parameter of student-t (not its standard
	// deviation) and of laplace (b, with SD = b√2); positive. Default 1.
	Scale *float64 `yaml:"scale" json:"scale,omitempty"`
	// Meanlog is the mean of log x for lognormal. Default 0.
	Meanlog *float64 `yaml:"meanlog" json:"meanlog,omitempty"`
	// Sdlog is the standard deviation of log x for lognormal; positive.
	// Default 1.
	Sdlog *float64 `yaml:"sdlog" json:"sdlog,omitempty"`
	// Rate is the rate λ of exponential (mean 1/λ); positive. Default 1.
	Rate *float64 `yaml:"rate" json:"rate,omitempty"`
	// Levels are the values a levels column cycles through, row i
	// (counting from 0) taking levels[i mod len]; required for levels.
	Levels []float64 `yaml:"levels" json:"levels,omitempty"`
}

// Noise is the distribution of the errors of clean observations, chosen by
// Dist, with the parameters that distribution takes:
//
//	normal          scale = standard deviation
//	student-t       df (required), scale
//	laplace         scale (the exponential scale b; SD = b√2)
//	cauchy          scale
//	normal-mixture  scale, mix-fraction (required), mix-factor (required):
//	                (1-mix-fraction) N(0, scale²) + mix-fraction N(0, (mix-factor·scale)²)
//	skewed          scale = standard deviation, shape (default 4): a centred
//	                gamma with skewness 2/√shape
//
// Every noise has mean zero where the mean exists (the Cauchy has none;
// it is centred at its median).
type Noise struct {
	// Dist is the noise distribution. Default normal.
	Dist NoiseDist `yaml:"dist" json:"dist"`
	// Scale is the noise scale. Default 1.
	Scale *float64 `yaml:"scale" json:"scale"`
	// DF is the degrees of freedom of student-t.
	DF *float64 `yaml:"df" json:"df,omitempty"`
	// MixFraction is the weight of the wide component of normal-mixture.
	MixFraction *float64 `yaml:"mix-fraction" json:"mix_fraction,omitempty"`
	// MixFactor is how many times wider the wide component is.
	MixFactor *float64 `yaml:"mix-factor" json:"mix_factor,omitempty"`
	// Shape is the gamma shape of skewed noise.
	Shape *float64 `yaml:"shape" json:"shape,omitempty"`
	// GrowsWith makes the noise heteroscedastic: observation i's noise is
	// multiplied by 1 + rate·|x_ij| for the named column j.
	GrowsWith *Growth `yaml:"grows-with" json:"grows_with,omitempty"`
}

// Growth is heteroscedasticity: the noise spread grows with a column.
type Growth struct {
	// Column names the predictor the spread grows with.
	Column string `yaml:"column" json:"column"`
	// Rate is the growth per unit of |x|; ≥ 0.
	Rate float64 `yaml:"rate" json:"rate"`
}

// Contamination is a fraction of bad observations of one kind. In each
// dataset round(fraction·n) observations, chosen at random, are replaced:
//
//	vertical       the error becomes shift + spread·Z (one-sided), or
//	               ±shift + spread·Z with a random sign (sides: two);
//	               keys: fraction, shift (required), spread (0), sides (one)
//	bad-leverage   x becomes at + at-spread·Z per column and y becomes
//	               response + spread·Z: points far out in x, off the model;
//	               keys: fraction, at (required), at-spread (0),
//	               response (required), spread (0)
//	good-leverage  x becomes at + at-spread·Z and y follows the model with
//	               its ordinary noise: far out in x, on the model;
//	               keys: fraction, at (required), at-spread (0)
//
// at is one number for every column or one per column. Z is standard normal.
// The total fraction over all contamination must be below 0.5.
type Contamination struct {
	// Label names the contamination in sweep paths. Default: its kind,
	// made unique with a number.
	Label string `yaml:"label" json:"label"`
	// Kind is vertical, bad-leverage or good-leverage; required.
	Kind ContamKind `yaml:"kind" json:"kind"`
	// Fraction is the share of observations replaced: at least 0 and
	// below 0.5, round(fraction·n) rows. Default 0.
	Fraction float64 `yaml:"fraction" json:"fraction"`
	// Shift is where the errors of vertical outliers sit, in units of y;
	// required for vertical.
	Shift *float64 `yaml:"shift" json:"shift,omitempty"`
	// Spread is the standard deviation of the outliers' errors about
	// ±shift (vertical) or of their y about response (bad-leverage); ≥ 0.
	// Default 0.
	Spread *float64 `yaml:"spread" json:"spread,omitempty"`
	// Sides is one (every vertical outlier at +shift) or two (at +shift
	// or −shift, each with probability 1/2). Default one.
	Sides string `yaml:"sides" json:"sides,omitempty"`
	// At is the x position of leverage points: one number for every
	// column or one per column; required for both leverage kinds.
	At Numbers `yaml:"at" json:"at,omitempty"`
	// AtSpread is the standard deviation of each leverage point's x about
	// at, per column; ≥ 0. Default 0.
	AtSpread *float64 `yaml:"at-spread" json:"at_spread,omitempty"`
	// Response is the y value bad-leverage points take before spread is
	// added; required for bad-leverage.
	Response *float64 `yaml:"response" json:"response,omitempty"`
}

// EstimatorSpec is one estimator to run on every dataset.
type EstimatorSpec struct {
	// Label names the estimator in results; unique. Default: method and
	// psi, for example irls-huber.
	Label string `yaml:"label" json:"label"`
	// Method is ls (least squares by QR), irls or newton for an M-estimator,
	// or one of the high-breakdown comparators: s-estimate (bisquare
	// S-estimator, 50% breakdown), mm-estimate (S start and scale, then a
	// bisquare M-step at 95% efficiency), lts (least trimmed squares) or lad
	// (least absolute deviations, solved exactly); external for a program
	// of the user's (see Command), or go for a Go estimator registered by
	// label with the harness (harness.Options.Fitters).
	Method string `yaml:"method" json:"method"`
	// Command is the program, and its arguments, of an estimator with
	// method external: run without a shell, from the scenario file's
	// folder, and fed one dataset per line (see package external).
	// Required for external and refused for every other method. Running a
	// scenario with a command needs --allow-commands.
	Command []string `yaml:"command" json:"command,omitempty"`
	// Timeout bounds the wait for each fit of an external estimator, as a
	// duration such as 60s or 2m; positive. Default 60s.
	Timeout string `yaml:"timeout" json:"timeout,omitempty"`
	// Psi is the psi of an M-estimator (irls, newton; for mm-estimate the
	// psi of the M-step, default bisquare 4.685). For external and go it is
	// optional and only declares the psi the estimator uses, for the
	// theory beside simulation and the psi figures: an M-estimator with a
	// scale consistent at the normal.
	Psi PsiSpec `yaml:"psi" json:"psi,omitempty"`
	// Tuning is the family's tuning constant(s): one number or a list.
	// Default: the family's default.
	Tuning Numbers `yaml:"tuning" json:"tuning,omitempty"`
	// Scale is mad (re-estimated every iteration), fixed:S for a known
	// scale S, or start (held at the scale of the start estimate). Default
	// mad.
	Scale ScaleSpec `yaml:"scale" json:"scale,omitempty"`
	// Start is the method whose estimate starts an M-estimator (ls,
	// s-estimate, mm-estimate, lts, lad) or a list of coefficients,
	// intercept first. Default ls.
	Start StartSpec `yaml:"start" json:"start,omitempty"`
	// Resampling tunes the estimators that draw elemental subsets
	// (s-estimate, mm-estimate, lts, and starts by them).
	Resampling *Resampling `yaml:"resampling" json:"resampling,omitempty"`
	// Stop holds the stopping rules.
	Stop Stop `yaml:"stop" json:"stop"`
	// SolverAudit, when true, audits every fit of this estimator: the fit
	// is continued to its fixed point at machine precision and the
	// distance of the returned estimate from it is recorded in standard
	// errors, with the observed convergence rate and the iterations each
	// change tolerance would need (see harness, estimators.AuditWorkspace).
	// It changes no estimate. Default false; run --audit-solvers turns it
	// on for every estimator.
	SolverAudit bool `yaml:"solver-audit" json:"solver_audit,omitempty"`
	// Roots, when true, refits every replicate of an estimator with a
	// redescending psi from the least-squares, LAD and S estimates and the
	// true coefficients (estimators.FindRoots), and reports how often the
	// starts reach different roots. It changes no estimate. Default false.
	Roots bool `yaml:"roots" json:"roots,omitempty"`
}

// Resampling are the settings of the resampling estimators.
type Resampling struct {
	// Subsets is the number of random elemental subsets. Default: enough
	// for a clean subset with probability 0.99 at 50% contamination, at
	// least 500 and at most 10,000.
	Subsets int `yaml:"subsets" json:"subsets,omitempty"`
	// Keep is how many best candidates are refined fully. Default 5 (S) or
	// 10 (LTS).
	Keep int `yaml:"keep" json:"keep,omitempty"`
	// SC is the bisquare constant of the S-scale. Default 1.5476449809…
	// (the exact 50% breakdown point).
	SC float64 `yaml:"s-tuning" json:"s_tuning,omitempty"`
	// SDivisor is the divisor d of the S-scale's equation
	// (1/d) Σ rho(r_i/s) = b: n or n-p. Default n.
	SDivisor string `yaml:"s-divisor" json:"s_divisor,omitempty"`
	// H is the number of observations LTS keeps. Default ⌊(n+p+1)/2⌋.
	H int `yaml:"h" json:"h,omitempty"`
}

// Stop holds the stopping rules of an iterative fit. If neither change nor
// equations is given, change is used with its default.
type Stop struct {
	// Change stops when the relative change in coefficients is at most
	// this. Default 1e-8.
	Change *float64 `yaml:"change" json:"change,omitempty"`
	// Equations stops when the estimating-equation norm is at most this.
	Equations *float64 `yaml:"equations" json:"equations,omitempty"`
	// MaxIter caps the iterations. Default 100.
	MaxIter *int `yaml:"max-iter" json:"max_iter,omitempty"`
	// Require is any (the first rule that holds stops the fit) or all
	// (every given rule must hold at once). Default any.
	Require StopRequire `yaml:"require" json:"require,omitzero"`
}
