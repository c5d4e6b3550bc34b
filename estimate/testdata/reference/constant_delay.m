% Reference values for estimate's discretization and steady moments, from
% GNU Octave's control package (Debian octave-control), independent of the
% Go code: c2d for the zero-order-hold sampling, the fractional input
% delay by the augmented form of Astrom & Wittenmark (Computer-Controlled
% Systems, 3rd ed., sec. 2.3: Gamma0 = Gamma(h - tau), Gamma1 =
% Phi(h - tau) Gamma(tau)), W_d by adaptive quadrature of
% e^{As} W e^{A's} (not Van Loan's method), and the steady covariance of the
% loss-free, constant-delay loop by dlyap.
%
% Run from this directory:
%   octave --no-gui --quiet constant_delay.m > constant_delay.out
% Output: one line per matrix, "case.name rows cols v11 v12 ... (row-major)".
pkg load control
format long

function emit(name, M)
  printf('%s %d %d', name, rows(M), columns(M));
  printf(' %.17g', M');
  printf('\n');
end

function run_case(name, A, B, C, W, V, Ac, Bc, Cc, Dc, r, h, tau)
  n = rows(A); m = columns(B); p = rows(C); nc = rows(Ac);
  sys = ss(A, B, C, zeros(p, m));
  d = c2d(sys, h, 'zoh');       Phi = d.a;  Gam = d.b;
  d0 = c2d(sys, h - tau, 'zoh'); G0 = d0.b; Phi0 = d0.a;
  d1 = c2d(sys, tau, 'zoh');     G1 = Phi0 * d1.b;
  Wd = integral(@(s) expm(A*s) * W * expm(A'*s), 0, h, 'ArrayValued', true, 'AbsTol', 1e-18);
  Wd = (Wd + Wd') / 2;
  emit([name '.Phi'], Phi); emit([name '.Gamma'], Gam);
  emit([name '.Gamma0'], G0); emit([name '.Gamma1'], G1);
  emit([name '.Wd'], Wd);
  % Closed loop in mode m2(tau) every period, z = [x; u_prev; xc]:
  %   x'  = (Phi - G0 Dc C) x + G1 u + G0 Cc xc + G0 Dc r + w - G0 Dc v
  %   u'  = -Dc C x + Cc xc + Dc r - Dc v
  %   xc' = -Bc C x + Ac xc + Bc r - Bc v
  if nc == 0
    Ac = zeros(0); Bc = zeros(0, p); Cc = zeros(m, 0);
  end
  F = [Phi - G0*Dc*C, G1, G0*Cc; -Dc*C, zeros(m), Cc; -Bc*C, zeros(nc, m), Ac];
  g = [G0*Dc*r; Dc*r; Bc*r];
  H = [eye(n), -G0*Dc; zeros(m, n), -Dc; zeros(nc, n), -Bc];
  Xi = blkdiag(Wd, V);
  mz = (eye(n + m + nc) - F) \ g;
  Pz = dlyap(F, H*Xi*H');
  Pz = (Pz + Pz') / 2;
  Ex = mz(1:n); Px = Pz(1:n, 1:n);
  Ee = r - C*Ex;
  Eee = Ee'*Ee + trace(C*Px*C') + trace(V);
  emit([name '.rho'], max(abs(eig(F)))^2);
  emit([name '.mean_z'], mz');
  emit([name '.cov_z'], Pz);
  emit([name '.error_mean'], Ee');
  emit([name '.error_second_moment'], Eee);
end

% servo: the loop example of profiles/doc.go, 1 ms + 1.5 ms network, 0.5 ms compute.
run_case('servo', [0 1; 0 -2], [0; 3], [1 0], [0 0; 0 0.04], 1e-6, ...
         1, 0.01, 5, 12, 0.5, 0.01, 0.003);
% mimo: three states (a lightly damped pair and a real pole), two inputs,
% two outputs, static diagonal controller, 20 ms of a 50 ms period.
run_case('mimo', [-1 2 0; -2 -1 0; 0 0 -3], [1 0; 0 1; 1 1], [1 0 0; 0 0 1], ...
         diag([0.1 0.1 0.2]), diag([1e-4 2e-4]), ...
         zeros(0), zeros(0, 2), zeros(2, 0), [0.5 0; 0 0.8], [1; -0.5], 0.05, 0.02);
