% Reference values for the loss-free gain margin (estimate/model.md §17):
% GNU Octave's control package, margin() of the open loop L = K P, the
% plant 1/(s(s+1)) sampled with c2d (zero-order hold) at h = 0.1 s.
%   p_gain   K = 2 (a static gain)
%   pi_gain  K: xc' = xc + 0.1 e, u = 0.5 xc + 2 e (a discrete PI)
% Printed: <name> gain_margin (a factor on the controller's output) and
% the phase crossover frequency (rad/s).
%
% Run from this directory:
%     octave --no-gui -q gain_margin.m > gain_margin.out
pkg load control
printf("# octave %s, control %s\n", version(), pkg("list"){1}.version);
s = tf("s");
P = c2d(1/(s*(s+1)), 0.1, "zoh");
loops = {"p_gain", ss([], [], [], 2, 0.1); "pi_gain", ss(1, 0.1, 0.5, 2, 0.1)};
for i = 1:rows(loops)
  [gm, pm, wcg, wcp] = margin(loops{i, 2} * P);
  printf("%s_gain_margin %.15g\n", loops{i, 1}, gm);
  printf("%s_phase_crossover %.15g\n", loops{i, 1}, wcg);
end
