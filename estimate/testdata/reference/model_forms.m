% Reference values for the plant and controller forms of the loop file
% (profiles/formats.md; estimate/model.md §18): GNU Octave's control
% package, independent of the Go code.
%
% servo: the plant 3/(s(s + 2)), state space A = [0 1; 0 -2], B = [0; 3],
% C = [1 0], process noise intensity W = diag(0, 0.04), sampled with c2d
% (zero-order hold) at h = 10 ms: Phi, Gamma, and W_d by Van Loan's
% integral (expm); d2c of the sampled plant back (A, B).
% pid_<method>: C(s) = kp + ki/s + kd s/(Tf s + 1), kp = 2, ki = 1.5,
% kd = 0.1, Tf = 0.02 s, c2d at h = 10 ms with tustin and zoh: the
% discrete transfer function's coefficients (highest power of z first,
% denominator monic).
%
% Run from this directory:
%     octave --no-gui -q model_forms.m > model_forms.out
pkg load control
printf("# octave %s, control %s\n", version(), pkg("list"){1}.version);
h = 0.01;
A = [0 1; 0 -2]; B = [0; 3]; C = [1 0]; W = diag([0 0.04]);
sysd = c2d(ss(A, B, C, 0), h, "zoh");
[Phi, Gam] = ssdata(sysd);
M = expm([-A W; zeros(2) A'] * h);
Wd = Phi * M(1:2, 3:4);
Wd = (Wd + Wd') / 2;
sysc = d2c(sysd, "zoh");
[Ac, Bc] = ssdata(sysc);
names = {"phi", Phi; "gamma", Gam; "wd", Wd; "d2c_a", Ac; "d2c_b", Bc};
for k = 1:rows(names)
  X = names{k, 2};
  for i = 1:rows(X)
    for j = 1:columns(X)
      printf("servo_%s_%d%d %.17g\n", names{k, 1}, i - 1, j - 1, X(i, j));
    end
  end
end
s = tf("s");
Cs = 2 + 1.5 / s + 0.1 * s / (0.02 * s + 1);
for m = {"tustin", "zoh"}
  Cz = c2d(Cs, h, m{1});
  [num, den] = tfdata(Cz, "v");
  num = num / den(1); den = den / den(1);
  for i = 1:numel(num)
    printf("pid_%s_num%d %.17g\n", m{1}, i - 1, num(i));
  end
  for i = 1:numel(den)
    printf("pid_%s_den%d %.17g\n", m{1}, i - 1, den(i));
  end
end
