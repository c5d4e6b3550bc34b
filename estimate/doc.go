// Package estimate computes what theory predicts for a control loop
// closed over a lossy, delaying network: mean-square stability, the
// steady moments of the tracking error and the loss margin. It is pure
// numerics: it takes a validated [profiles.Loop] and returns numbers or
// an error that says why it cannot, and the words a report uses for it
// ([VerdictOf], [DescribeStability]). The measurements it is compared with
// are elsewhere: the online estimators in estimate/online, fitting a
// profile to a probe trace in estimate/fit, the monitor engine that joins
// them in estimate/engine.
//
// The model is described in estimate/model.md, whose numbered sections the
// code cites as "estimate/model.md §N":
//
//   - §1 the rig and its timing: a continuous plant dx = (A x + B u) dt +
//     dw, E[dw dwᵀ] = W dt, sampled every h with noise of covariance V;
//     a discrete controller run on each sample used; a held input; the
//     three modes of a period, m0 (sample lost or stale), m1 (command lost
//     or late), m2(τ) (both in time, the command applied at τ < h);
//   - §2 the network: i.i.d. or Markov-modulated directions, the joint
//     chain P = P_sc ⊗ P_ca, the modes' probabilities;
//   - §3 the closed loop as a Markov jump linear system on
//     z = [x; u_{k−1}; xc] (discretize.go, modes.go);
//   - §4 its moments and mean-square stability, ρ(ℒ) < 1 (moments.go);
//   - §5 the expectation over the delays (delaylaw.go, lawparts.go,
//     tanhsinh.go);
//   - §6 deciding stability, certified (stability.go);
//   - §7 what a prediction reports ([Predict]);
//   - §8 the loss margin (margin.go);
//   - §9 the online estimate and the verdict (estimate/online,
//     estimate/engine);
//   - §10 conventions, §11 limits (limits.go), §12 the published sources
//     the tests check against;
//   - §13 delays of several periods: the loop file's timing policy
//     (commands applied newest-first within a horizon of Na periods), the
//     chain of the network state and the age of the command in force,
//     every arrival inside a period at its own offset, the per-period
//     input integrals as products of the pending commands' arrival CDFs
//     (longlaw.go, longperiod.go) turned into moment-matched modes
//     (longchain.go, long.go); and when the exact chain is not built (a
//     sample horizon above one period, or too large a chain), a Monte
//     Carlo answer from the same rules, marked as such. The derivation is
//     written out in §13 with its sources: J. Nilsson's 1998 thesis (the
//     chapter on delays longer than a period), L. Xiao, A. Hassibi and
//     J. P. How (ACC 2000: the age of the applied information as the jump
//     variable), J. P. Hespanha, P. Naghshtabrizi and Y. Xu (Proc. IEEE
//     95(1), 2007: long delays, reordering, newest-first), and Costa,
//     Fragoso and Marques (2005) for the moments;
//   - §14 a compute delay drawn from a law: only c + τca matters to
//     either model, so the law's varying part is convolved into the
//     command direction's delay (sumlaw.go) and both models run on it
//     unchanged; the convolution of independent laws as in W. Feller,
//     An Introduction to Probability Theory and Its Applications, vol. II
//     (1971), §V.4;
//   - §15 a sinusoidal reference: the first moments of a jump linear
//     system are an LTI recursion driven by the reference, so their
//     periodic steady state is one shifted linear solve per frequency,
//     (e^{jν} I − 𝒜) Q = b(R); the second moments are driven at 0, ν and
//     2ν and solved likewise (harmonic.go, [Model.FrequencyResponse]):
//     the mean response's gain and phase, the error's variance averaged
//     over the phase and at its peak, beside the loss-free loop's
//     classical response; the recursions are those of Costa, Fragoso
//     and Marques (2005), driven by a periodic input.
//
// Entry points: [Predict] for the prediction, [Build] for the model itself
// ([Model.Transient] for a step response, [Model.FrequencyResponse] for a
// sinusoidal reference, [Model.Radius]), [Sweep] for a
// curve against extra loss or a delay scale, [Simulate] for a seeded
// Monte Carlo run of the same jump system.
//
// Place in the flow: loop file (profiles) → the prediction (here) → the
// verdict, where the monitor engine (estimate/engine) compares the
// measured E[eᵀe] with it, and the metrics and reports that show both
// (`monitor predict`, estimate/report). It touches no socket and no
// datagram.
package estimate
