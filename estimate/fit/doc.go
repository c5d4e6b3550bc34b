// Package fit turns a measured link into a profile: it fits candidate
// delay laws to a probe trace's delays by maximum likelihood and ranks them
// by AIC with a Kolmogorov–Smirnov check of each, and fits the simplified
// Gilbert loss model (the probability of a first loss and of recovering
// from one) with the standard errors of both.
//
// Place in the flow: probe trace (profiles/trace) → fit (here) → a profile
// file the relay replays and the prediction reads (`impair fit`).
package fit
