% Reference values for a slow process loop with a narrow delay law, from
% GNU Octave with its control package (Debian octave, octave-control),
% independent of the Go code: the spectral radius of the second-moment
% operator and the steady E[e'e].
%
% The loop: period h = 1 s, compute delay c = 20 ms, both directions
% normal with mean 120 us and std 15 us (drawn again while negative), sensor
% loss 0.01, command loss 0.02. The plant is an invented heated tank (our
% own scenario): x1 the water temperature deviation, x2 the heater
% element's, dx1 = (x2 - x1)/30 dt, dx2 = (-x2 + 2u)/8 dt, with process
% noise and a noisy thermometer y = x1 + v; a PI controller runs on each
% sample used: xc' = xc + e, u = 0.05 xc + 2 e, e = r - y, r = 1.
%
% The model, from its description (not from the Go code): z = [x; u; xc],
% u the input held from the last period. Each period is in one of three
% modes: m0 (sample lost or stale: x' = Phi x + Gam u + w, u and xc held),
% m1 (command lost or late: the controller advances, the input is held),
% m2 (the new input u_k = Cc xc + Dc e acts from tau into the period on:
% x' = Phi x + Gam1(tau) u + Gam0(tau) u_k + w, u' = u_k, xc advanced), with
% Gam0(tau) = int_0^(h-tau) e^(As) ds B from c2d over h - tau and
% Gam1 = Gam - Gam0. P(m0) = ps + (1 - ps) P(S >= h), the m2 density of
% tau = S + T + c is (1 - ps)(1 - pa) f_(S+T)(tau - c) for tau < h, and
% P(m1) is the rest. The second-moment operator on vec(Q) is
%   K = P(m0) kron(F0, F0) + P(m1) kron(F1, F1) + int kron(F(tau), F(tau)) dens(tau) dtau
% and rho = max |eig(K)|; the steady moments solve (I - EF) q = Eg and
% (I - K) vec(Q) = vec(C2) as in jump_moments.m.
%
% The density of S + T for two normals N(m, s^2) truncated to [0, inf):
% with Z = 1 - Phi(-m/s) the mass each keeps,
%   f(x) = phi_(s sqrt 2)(x - 2m) (2 Phi(x/(s sqrt 2)) - 1) / Z^2,   x >= 0,
% from the product of the two Gaussian densities in the convolution
% integral, itself a Gaussian in the integration variable centred at x/2
% with std s/sqrt 2 (a standard identity; written from memory and checked
% here by integrating f to 1). The integral over tau is split into pieces
% of one std of S + T around its mean (+-16 std), where all the mass sits,
% and the rest of [c, h], each integrated adaptively by Octave's integral.
%
% Run from this directory:
%   octave --no-gui --quiet slow_loop.m > slow_loop.out
% Output: "name rows cols values..." (as constant_delay.m).
pkg load control
1;

function emit(name, M)
  printf('%s %d %d', name, rows(M), columns(M));
  printf(' %.17g', M');
  printf('\n');
end

function L = make_loop(A, B, C, W, V, Ac, Bc, Cc, Dc, r, h, c)
  L.A = A; L.B = B; L.C = C; L.W = W; L.V = V;
  L.Ac = Ac; L.Bc = Bc; L.Cc = Cc; L.Dc = Dc; L.r = r; L.h = h; L.c = c;
  L.n = rows(A); L.m = columns(B); L.p = rows(C); L.nc = rows(Ac);
  L.nz = L.n + L.m + L.nc;
  L.sys = ss(A, B, C, 0);
  d = c2d(L.sys, h, 'zoh'); L.Phi = d.a; L.Gam = d.b;
  L.Wd = integral(@(s) expm(A*s) * W * expm(A'*s), 0, h, 'ArrayValued', true, 'AbsTol', 1e-18);
  L.Wd = (L.Wd + L.Wd') / 2;
end

% Mode matrices: kind 0, 1, 2 (tau for 2).
function [F, g, HXH] = mode_of(L, kind, tau)
  n = L.n; m = L.m; nc = L.nc; p = L.p;
  Phi = L.Phi; Gam = L.Gam; Ac = L.Ac; Bc = L.Bc; Cc = L.Cc; Dc = L.Dc; C = L.C; r = L.r;
  H = [eye(n), zeros(n, p); zeros(m, n + p); zeros(nc, n + p)];
  if kind == 0
    F = [Phi, Gam, zeros(n, nc); zeros(m, n), eye(m), zeros(m, nc); zeros(nc, n + m), eye(nc)];
    g = zeros(L.nz, 1);
  elseif kind == 1
    F = [Phi, Gam, zeros(n, nc); zeros(m, n), eye(m), zeros(m, nc); -Bc*C, zeros(nc, m), Ac];
    g = [zeros(n + m, 1); Bc*r];
    H(n+m+1:end, n+1:end) = -Bc;
  else
    if L.h - tau > 0
      d0 = c2d(L.sys, L.h - tau, 'zoh'); G0 = d0.b;
    else
      G0 = zeros(n, m);
    end
    G1 = Gam - G0;
    F = [Phi - G0*Dc*C, G1, G0*Cc; -Dc*C, zeros(m), Cc; -Bc*C, zeros(nc, m), Ac];
    g = [G0*Dc*r; Dc*r; Bc*r];
    H = [eye(n), -G0*Dc; zeros(m, n), -Dc; zeros(nc, n), -Bc];
  end
  HXH = H * blkdiag(L.Wd, L.V) * H';
end

function K = kron_of(L, t)
  F = mode_of(L, 2, t); K = kron(F, F);
end
function F = mode_F(L, t)
  F = mode_of(L, 2, t);
end
function g = mode_g(L, t)
  [~, g] = mode_of(L, 2, t);
end
function C = const_term(L, t, q)
  [F, g, HXH] = mode_of(L, 2, t); C = F*q*g' + g*q'*F' + g*g' + HXH;
end

function v = pint(f, pts)
  v = 0;
  for k = 1:numel(pts) - 1
    v += integral(f, pts(k), pts(k+1), 'ArrayValued', true, 'AbsTol', 1e-15);
  end
end

% One joint network state (both directions i.i.d.).
function out = solve_one(L, p0, p1, dens, pts)
  nz = L.nz; d = nz^2;
  [F0, g0, H0] = mode_of(L, 0, 0); [F1, g1, H1] = mode_of(L, 1, 0);
  K = p0*kron(F0, F0) + p1*kron(F1, F1) + pint(@(t) dens(t) * kron_of(L, t), pts);
  EF = p0*F0 + p1*F1 + pint(@(t) dens(t) * mode_F(L, t), pts);
  Eg = p0*g0 + p1*g1 + pint(@(t) dens(t) * mode_g(L, t), pts);
  q = (eye(nz) - EF) \ Eg;
  C2 = p0*(F0*q*g0' + g0*q'*F0' + g0*g0' + H0) + p1*(F1*q*g1' + g1*q'*F1' + g1*g1' + H1) ...
       + pint(@(t) dens(t) * const_term(L, t, q), pts);
  x = (eye(d) - K) \ C2(:);
  Q = reshape(x, nz, nz);
  Ex = q(1:L.n); Px = Q(1:L.n, 1:L.n) - Ex*Ex';
  em = L.r - L.C*Ex;
  out.error_mean = em;
  out.error_second_moment = em'*em + trace(L.C*Px*L.C') + trace(L.V);
  out.rho = max(abs(eig(K)));
end

us = 1e-6; ms = 1e-3;
h = 1; c = 20*ms; ps = 0.01; pa = 0.02;
mu = 120*us; sd = 15*us;
L = make_loop([-1/30, 1/30; 0, -1/8], [0; 2/8], [1, 0], diag([1e-4, 1e-3]), 1e-4, ...
              1, 1, 0.05, 2, 1, h, c);

Phi = @(x) erfc(-x/sqrt(2))/2;        % standard normal CDF
npdf = @(x, m, s) exp(-((x - m)/s).^2/2) / (s*sqrt(2*pi));
Z = 1 - Phi(-mu/sd);
s2 = sd*sqrt(2);
fsum = @(x) (x >= 0) .* npdf(x, 2*mu, s2) .* (2*Phi(x/s2) - 1) / Z^2;
% tau pieces: one std of S + T each around its mean, then the rest of [c, h]
ctr = c + 2*mu;
pts = [c, ctr + (-16:16)*s2, h];
pts = unique(pts(pts >= c & pts <= h));
total = pint(@(t) fsum(t - c), pts);
% the truncated law keeps Z of the normal below 0: P(S >= h) is 0 here
% (h is 66000 std above the mean), so P(S < h) = 1.
dens = @(t) (1 - ps)*(1 - pa)*fsum(t - c);
m2 = pint(dens, pts);
p0 = ps; p1 = 1 - p0 - m2;
out = solve_one(L, p0, p1, dens, pts);
emit('slow_loop.density_mass', total);
emit('slow_loop.p0', p0);
emit('slow_loop.p1', p1);
emit('slow_loop.p2', m2);
emit('slow_loop.mean_delay_m2', pint(@(t) t*dens(t), pts) / m2);
emit('slow_loop.rho', out.rho);
emit('slow_loop.error_mean', out.error_mean');
emit('slow_loop.error_second_moment', out.error_second_moment);
