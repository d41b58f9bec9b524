/**
 * The standard normal distribution function Φ and its inverse Φ⁻¹, both to about double precision, so
 * that Φ(Φ⁻¹(p)) returns p to ~1e-16 and the codec's continuous round trip can be exact.
 *
 * Φ⁻¹: Wichura, "Algorithm AS 241: The percentage points of the normal distribution",
 *      Applied Statistics 37(3):477–484, 1988 (PPND16, accurate to about 1 part in 10^16).
 * Φ:   Cody, "Algorithm 715: SPECFUN", ACM Transactions on Mathematical Software 19:22–32, 1993
 *      (ANORM; near-minimax rational approximations from Cody, "Rational Chebyshev approximations for
 *      the error function", Mathematics of Computation 23:631–637, 1969).
 * The coefficients are the published ones; the code is written for this project.
 */

/** Evaluates c[0] + c[1]·x + … + c[n]·x^n by Horner's rule (coefficients in ascending order). */
function polynomial(coefficients: readonly number[], x: number): number {
  let sum = 0;
  for (let i = coefficients.length - 1; i >= 0; i--) sum = sum * x + coefficients[i]!;
  return sum;
}

// AS 241, region |p − 0.5| ≤ 0.425, in r = 0.180625 − q².
const CENTRAL_NUMERATOR = [
  3.387132872796366608, 133.14166789178437745, 1971.5909503065514427, 13731.693765509461125,
  45921.953931549871457, 67265.770927008700853, 33430.575583588128105, 2509.0809287301226727,
];
const CENTRAL_DENOMINATOR = [
  1, 42.313330701600911252, 687.1870074920579083, 5394.1960214247511077, 21213.794301586595867,
  39307.89580009271061, 28729.085735721942674, 5226.495278852854561,
];
// AS 241, intermediate tail, r = sqrt(−log(min(p, 1−p))) − 1.6 for r ≤ 5.
const INTERMEDIATE_NUMERATOR = [
  1.42343711074968357734, 4.6303378461565452959, 5.7694972214606914055, 3.64784832476320460504,
  1.27045825245236838258, 0.24178072517745061177, 0.0227238449892691845833, 7.7454501427834140764e-4,
];
const INTERMEDIATE_DENOMINATOR = [
  1, 2.05319162663775882187, 1.6763848301838038494, 0.68976733498510000455, 0.14810397642748007459,
  0.0151986665636164571966, 5.475938084995344946e-4, 1.05075007164441684324e-9,
];
// AS 241, far tail, r = sqrt(−log(min(p, 1−p))) − 5.
const FAR_NUMERATOR = [
  6.6579046435011037772, 5.4637849111641143699, 1.7848265399172913358, 0.29656057182850489123,
  0.026532189526576123093, 0.0012426609473880784386, 2.71155556874348757815e-5, 2.01033439929228813265e-7,
];
const FAR_DENOMINATOR = [
  1, 0.59983220655588793769, 0.13692988092273580531, 0.0148753612908506148525, 7.868691311456132591e-4,
  1.8463183175100546818e-5, 1.4215117583164458887e-7, 2.04426310338993978564e-15,
];

/**
 * Φ⁻¹(p): the z with P(Z ≤ z) = p for a standard normal Z (Wichura's AS 241, PPND16).
 * Returns −Infinity for p ≤ 0, +Infinity for p ≥ 1 and NaN for NaN.
 */
export function standardNormalQuantile(p: number): number {
  if (Number.isNaN(p)) return Number.NaN;
  if (p <= 0) return Number.NEGATIVE_INFINITY;
  if (p >= 1) return Number.POSITIVE_INFINITY;
  const q = p - 0.5;
  if (Math.abs(q) <= 0.425) {
    const r = 0.180625 - q * q;
    return (q * polynomial(CENTRAL_NUMERATOR, r)) / polynomial(CENTRAL_DENOMINATOR, r);
  }
  let r = Math.sqrt(-Math.log(q < 0 ? p : 1 - p));
  let z: number;
  if (r <= 5) {
    r -= 1.6;
    z = polynomial(INTERMEDIATE_NUMERATOR, r) / polynomial(INTERMEDIATE_DENOMINATOR, r);
  } else {
    r -= 5;
    z = polynomial(FAR_NUMERATOR, r) / polynomial(FAR_DENOMINATOR, r);
  }
  return q < 0 ? -z : z;
}

// Cody's ANORM, |x| ≤ 0.66291: Φ(x) = 0.5 + x·A(x²)/B(x²).
const SMALL_A = [
  1.8154981253343561249e4, 1.0676894854603709582e3, 1.6102823106855587881e2, 2.2352520354606839287,
  6.5682337918207449113e-2,
];
const SMALL_B = [
  4.5507789335026729956e4, 1.0260932208618978205e4, 9.7609855173777669322e2, 4.720258190468824187e1, 1,
];
// Cody's ANORM, 0.66291 < |x| ≤ sqrt(32): upper tail = exp(−x²/2)·C(|x|)/D(|x|).
const MIDDLE_C = [
  9.8427148383839780218e3, 1.1602651437647350124e4, 6.8481904505362823326e3, 2.4945375852903726711e3,
  5.9727027639480026226e2, 9.3506656132177855979e1, 8.8831497943883759412, 3.9894151208813466764e-1,
  1.0765576773720192317e-8,
];
const MIDDLE_D = [
  1.9685429676859990727e4, 3.8912003286093271411e4, 3.4900952721145977266e4, 1.8615571640885098091e4,
  6.485558298266760755e3, 1.519377599407554805e3, 2.3538790178262499861e2, 2.2266688044328115691e1, 1,
];
// Cody's ANORM, |x| > sqrt(32): upper tail = exp(−x²/2)·(1/sqrt(2π) − P(1/x²)/Q(1/x²)/x²)/|x|.
const LARGE_P = [
  2.9112874951168792e-5, 1.421619193227893466e-3, 2.2235277870649807e-2, 1.274011611602473639e-1,
  2.1589853405795699e-1, 2.307344176494017303e-2,
];
const LARGE_Q = [
  7.29751555083966205e-5, 3.78239633202758244e-3, 6.59881378689285515e-2, 4.68238212480865118e-1,
  1.28426009614491121, 1,
];
const ONE_OVER_SQRT_2PI = 0.3989422804014327;

/** exp(−x²/2) computed as Cody does, splitting x to keep the exponent's rounding error small. */
function gaussianKernel(x: number): number {
  const coarse = Math.trunc(x * 16) / 16;
  const rest = (x - coarse) * (x + coarse);
  return Math.exp(-coarse * coarse * 0.5) * Math.exp(-rest * 0.5);
}

/** Φ(x) = P(Z ≤ x) for a standard normal Z (Cody's ANORM). NaN for NaN. */
export function standardNormalCdf(x: number): number {
  if (Number.isNaN(x)) return Number.NaN;
  const y = Math.abs(x);
  if (y <= 0.66291) {
    const xsq = x * x;
    return 0.5 + (x * polynomial(SMALL_A, xsq)) / polynomial(SMALL_B, xsq);
  }
  let upperTail: number;
  if (y <= Math.sqrt(32)) {
    upperTail = (gaussianKernel(y) * polynomial(MIDDLE_C, y)) / polynomial(MIDDLE_D, y);
  } else if (y < 40) {
    const inverseSquare = 1 / (y * y);
    const correction = (inverseSquare * polynomial(LARGE_P, inverseSquare)) / polynomial(LARGE_Q, inverseSquare);
    upperTail = (gaussianKernel(y) * (ONE_OVER_SQRT_2PI - correction)) / y;
  } else {
    upperTail = 0;
  }
  return x > 0 ? 1 - upperTail : upperTail;
}
