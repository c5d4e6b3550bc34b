// Package laws holds the delay laws a profile can give a datagram: constant,
// uniform, exponential, gamma, lognormal, truncated normal, Weibull,
// Pareto, shifted, mixtures and empirical samples. Each one samples without
// allocating (the relay draws one per datagram), and states its CDF, its
// density, its atoms, its moments and, where it has one, its quantile, which
// the prediction integrates over. The Kolmogorov–Smirnov statistic that
// checks a sample against a law lives here too.
//
// Place in the flow: profile file → laws → the relay draws a delay per
// datagram (emulate) and the prediction integrates over the same law
// (estimate). Nothing here reads files except an empirical law's sample
// list, through profiles/yamlpos.
package laws
