// Chi-square critical values for the NIS charts' 95 % band.
//
// Upper-tail 0.05 critical values, NIST/SEMATECH e-Handbook of Statistical Methods, section 1.3.6.7.4 (published).
// A consistent filter's NIS of an n-dimensional measurement is chi-square with n degrees of freedom, so 95 % of its
// values fall below chi2(0.95; n).
const UPPER_95 = { 1: 3.84146, 2: 5.99146, 3: 7.81473, 4: 9.48773 };

/** chi2(0.95; dof) for 1 to 4 degrees of freedom, or null for others. */
export function chiSquareUpper95(dof) {
  return UPPER_95[dof] ?? null;
}
