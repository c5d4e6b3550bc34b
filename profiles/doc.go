// Package profiles turns network profile files into validated values: the
// delay distributions and the Markov-modulated loss channels that the relay
// draws from and that the prediction takes expectations over.
//
// One definition serves both users. A [Delay] can be sampled (fast, without
// allocation, from a source the caller passes in) and it also exposes its
// law exactly: the CDF, the density of its absolutely continuous part, its
// atoms (point masses), its mean and variance, and the interval holding its
// mass. A [Channel] is a finite set of [State]s, each with its own loss
// probability and delay law, switching in continuous time with exponential
// dwell times; a direction with one set of parameters is a one-state channel.
//
// All times are in seconds, as float64.
package profiles
