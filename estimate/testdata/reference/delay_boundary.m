% The same values as delay_boundary.py from GNU Octave's roots and fzero,
% independently: the critical gain K*(d) of z^{d+1} - z^d + K (the loop
% x_{k+1} = x_k - K x_{k-d}) and the largest root modulus at 0.5, 0.9 and
% 1.1 times it.
%
% Run from this directory:
%   octave --no-gui --quiet delay_boundary.m > delay_boundary_octave.out
format long
function r = radius(d, K)
  if d == 0
    c = [1, -1 + K];
  else
    c = [1, -1, zeros(1, d - 1), K];
  end
  r = max(abs(roots(c)));
end
printf('# d K_star rho_0.5 rho_0.9 rho_1.1\n');
for d = 0:4
  ks = fzero(@(K) radius(d, K) - 1, [1e-6, 2.5], optimset('TolX', 1e-15));
  printf('%d %.15g %.15g %.15g %.15g\n', d, ks, radius(d, 0.5*ks), radius(d, 0.9*ks), radius(d, 1.1*ks));
end
