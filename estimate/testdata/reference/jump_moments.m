% An independent implementation of the prediction of the model of estimate/model.md (§3–§4) in
% GNU Octave (control package), for the check "second moments agree with
% an independent implementation to 1e-6 relative on smooth cases". Written
% from the model of estimate/doc.go alone: c2d for Phi, Gamma and Gamma0(tau) = Gamma(h - tau),
% W_d by quadrature, vec/kron second-moment operators (not estimate's
% symmetric vectors), the expectation over the delivered mode by Octave's
% adaptive integral of the delay density (not estimate's Chebyshev rule).
%
% Run from this directory:
%   octave --no-gui --quiet jump_moments.m > jump_moments.out
% Output: "case.name rows cols values..." as constant_delay.m.
pkg load control
1;

function emit(name, M)
  printf('%s %d %d', name, rows(M), columns(M));
  printf(' %.17g', M');
  printf('\n');
end

% The servo of profiles/doc.go: z = [x1 x2 u xc].
function L = servo_loop(h, c)
  L.A = [0 1; 0 -2]; L.B = [0; 3]; L.C = [1 0];
  L.W = [0 0; 0 0.04]; L.V = 1e-6;
  L.Ac = 1; L.Bc = 0.01; L.Cc = 5; L.Dc = 12; L.r = 0.5; L.h = h; L.c = c;
  sys = ss(L.A, L.B, L.C, 0);
  d = c2d(sys, h, 'zoh'); L.Phi = d.a; L.Gam = d.b;
  L.Wd = integral(@(s) expm(L.A*s) * L.W * expm(L.A'*s), 0, h, 'ArrayValued', true, 'AbsTol', 1e-18);
  L.Wd = (L.Wd + L.Wd') / 2;
  L.sys = sys;
end

% Mode matrices (estimate/model.md §3, held input). kind 0, 1, 2.
function [F, g, HXH] = mode_of(L, kind, tau)
  n = 2; m = 1; nc = 1; p = 1;
  Phi = L.Phi; Gam = L.Gam; Ac = L.Ac; Bc = L.Bc; Cc = L.Cc; Dc = L.Dc; C = L.C; r = L.r;
  H = [eye(n), zeros(n, p); zeros(m, n + p); zeros(nc, n + p)];
  if kind == 0
    F = [Phi, Gam, zeros(n, nc); zeros(m, n), eye(m), zeros(m, nc); zeros(nc, n + m), eye(nc)];
    g = zeros(n + m + nc, 1);
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

% Solve the MJLS moments. states(i): p0, p1, ps2 (factor on the density),
% dens (function of tau, the m2 density incl. its mass; [] for atoms),
% atoms (rows [tau mass]), ways (waypoints). P: joint transition matrix.
function out = solve_mjls(L, S, P)
  N = numel(S); nz = 4; d = nz^2;
  K = cell(N, 1); EF = cell(N, 1); Eg = cell(N, 1);
  for i = 1:N
    s = S{i};
    [F0, g0] = mode_of(L, 0, 0); [F1, g1] = mode_of(L, 1, 0);
    K{i} = s.p0*kron(F0, F0) + s.p1*kron(F1, F1);
    EF{i} = s.p0*F0 + s.p1*F1; Eg{i} = s.p0*g0 + s.p1*g1;
    for a = 1:rows(s.atoms)
      [F2, g2] = mode_of(L, 2, s.atoms(a, 1)); w = s.atoms(a, 2);
      K{i} += w*kron(F2, F2); EF{i} += w*F2; Eg{i} += w*g2;
    end
    if ~isempty(s.dens)
      fk = @(t) s.dens(t) * kron_of(L, t);
      K{i} += pint(fk, s.lo, s.hi, s.ways);
      fF = @(t) s.dens(t) * mode_F(L, t);
      EF{i} += pint(fF, s.lo, s.hi, s.ways);
      fg = @(t) s.dens(t) * mode_g(L, t);
      Eg{i} += pint(fg, s.lo, s.hi, s.ways);
    end
  end
  % Stationary law of P.
  [V, D] = eig(P'); [~, k] = min(abs(diag(D) - 1)); pi = real(V(:, k)); pi = pi / sum(pi);
  % First moments: q_j = sum_i P_ij (EF_i q_i + pi_i Eg_i).
  A1 = zeros(N*nz); b1 = zeros(N*nz, 1);
  for i = 1:N
    for j = 1:N
      A1((j-1)*nz+1:j*nz, (i-1)*nz+1:i*nz) = P(i, j) * EF{i};
      b1((j-1)*nz+1:j*nz) += P(i, j) * pi(i) * Eg{i};
    end
  end
  q = (eye(N*nz) - A1) \ b1;
  % Second moments on vec(Q_j).
  A2 = zeros(N*d); b2 = zeros(N*d, 1);
  for i = 1:N
    s = S{i}; qi = q((i-1)*nz+1:i*nz);
    Ci = zeros(nz);
    for kind = 0:1
      [F, g, HXH] = mode_of(L, kind, 0); w = [s.p0 s.p1](kind + 1);
      Ci += w * (F*qi*g' + g*qi'*F' + pi(i)*(g*g' + HXH));
    end
    for a = 1:rows(s.atoms)
      [F, g, HXH] = mode_of(L, 2, s.atoms(a, 1)); w = s.atoms(a, 2);
      Ci += w * (F*qi*g' + g*qi'*F' + pi(i)*(g*g' + HXH));
    end
    if ~isempty(s.dens)
      fc = @(t) s.dens(t) * const_term(L, t, qi, pi(i));
      Ci += pint(fc, s.lo, s.hi, s.ways);
    end
    for j = 1:N
      A2((j-1)*d+1:j*d, (i-1)*d+1:i*d) = P(i, j) * K{i};
      b2((j-1)*d+1:j*d) += P(i, j) * Ci(:);
    end
  end
  x = (eye(N*d) - A2) \ b2;
  Ez = zeros(nz, 1); Ezz = zeros(nz);
  for i = 1:N
    Ez += q((i-1)*nz+1:i*nz); Ezz += reshape(x((i-1)*d+1:i*d), nz, nz);
  end
  Ex = Ez(1:2); Px = Ezz(1:2, 1:2) - Ex*Ex';
  out.error_mean = L.r - L.C*Ex;
  out.error_second_moment = out.error_mean'*out.error_mean + trace(L.C*Px*L.C') + trace(L.V);
  out.rho = max(abs(eig(A2)));
end

% integral of f over [lo, hi], split at the waypoints (Octave's
% array-valued integral ignores its Waypoints option).
function v = pint(f, lo, hi, ways)
  pts = [lo, sort(ways(ways > lo & ways < hi)), hi];
  v = 0;
  for k = 1:numel(pts) - 1
    v += integral(f, pts(k), pts(k+1), 'ArrayValued', true, 'AbsTol', 1e-15);
  end
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
function C = const_term(L, t, q, p)
  [F, g, HXH] = mode_of(L, 2, t); C = F*q*g' + g*q'*F' + p*(g*g' + HXH);
end

ms = 1e-3;
% Case iid_trapezoid: h = 6 ms, c = 0.5 ms; sensor loss 0.08, delay
% uniform [1, 3] ms; command loss 0.05, delay uniform [0.5, 4] ms. The sum
% S has the trapezoid density; in time when S < h - c = 5.5 ms.
L = servo_loop(6*ms, 0.5*ms);
a1 = 1*ms; b1 = 3*ms; a2 = 0.5*ms; b2 = 4*ms; w1 = b1 - a1; w2 = b2 - a2;
trap = @(x) max(0, min([x - a1 - a2, b1 + b2 - x, w1, w2])) / (w1*w2);
ps = 0.08; pa = 0.05;
s.lo = a1 + a2 + L.c; s.hi = L.h;
s.ways = [a1 + a2 + min(w1, w2), a1 + a2 + max(w1, w2)] + L.c;
s.dens = @(t) (1 - ps)*(1 - pa)*trap(t - L.c);
m2 = pint(s.dens, s.lo, s.hi, s.ways);
s.p0 = ps; s.p1 = (1 - ps) - m2; s.atoms = zeros(0, 2);
out = solve_mjls(L, {s}, 1);
emit('iid_trapezoid.rho', out.rho);
emit('iid_trapezoid.error_mean', out.error_mean');
emit('iid_trapezoid.error_second_moment', out.error_second_moment);

% Case markov_atoms: h = 10 ms, c = 0.5 ms; sensor loss 0.02, constant
% 1 ms; command channel Gilbert-Elliott: good (mean dwell 0.5 s, loss 0.01,
% constant 1 ms), bad (0.1 s, loss 0.6, constant 6 ms).
L = servo_loop(10*ms, 0.5*ms);
G = [-1/0.5, 1/0.5; 1/0.1, -1/0.1];
P = expm(G * L.h);
S = {};
for k = 1:2
  pa = [0.01 0.6](k); dca = [1 6](k)*ms; ps = 0.02;
  s = struct('dens', [], 'lo', 0, 'hi', 0, 'ways', []);
  tau = 1*ms + dca + L.c;
  s.p0 = ps; s.atoms = [tau, (1 - ps)*(1 - pa)]; s.p1 = (1 - ps)*pa;
  S{k} = s;
end
out = solve_mjls(L, S, P);
emit('markov_atoms.rho', out.rho);
emit('markov_atoms.error_mean', out.error_mean');
emit('markov_atoms.error_second_moment', out.error_second_moment);
