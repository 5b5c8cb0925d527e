/**
 * Discrete algebraic Riccati equation (DARE) and the centralized LQR gain, solved at set-up
 * time with mathjs (offline analysis, small matrices):
 *
 *   P = AᵀPA − AᵀPB (R + BᵀPB)⁻¹ BᵀPA + Q,        K = (R + BᵀPB)⁻¹ BᵀPA,   u = −K x.
 *
 * Method: the structured doubling algorithm (SDA) first — quadratic convergence, with
 *   A₀ = A, G₀ = B R⁻¹ Bᵀ, H₀ = Q,
 *   W = (I + G H)⁻¹,  A ← A W A,  G ← G + A W G Aᵀ,  H ← H + Aᵀ H W A,   H → P;
 * if it does not settle (or its answer fails the checks), the Riccati difference equation
 * P ← Q + AᵀPA − AᵀPB(R + BᵀPB)⁻¹BᵀPA from P = Q is iterated to convergence instead.
 * Every answer is checked: relative residual of the equation, symmetry, and a stabilizing
 * closed loop (spectral radius of A − BK below one). Before solving, (A, B) is tested for
 * stabilizability with the PBH rank test on every eigenvalue of A with |λ| ≥ 1.
 */
import * as math from 'mathjs';
import { EigenvalueDecomposition, Matrix } from 'ml-matrix';

export type Mat = number[][];

/** Why the DARE could not be solved; the caller maps it to a place in its input. */
export class DareError extends Error {
  readonly code: 'dare.not_stabilizable' | 'dare.no_convergence' | 'dare.bad_weights' | 'dare.bad_shape';
  readonly hint: string;
  constructor(code: DareError['code'], message: string, hint: string) {
    super(message);
    this.name = 'DareError';
    this.code = code;
    this.hint = hint;
  }
}

export interface DareResult {
  /** The stabilizing solution P (n × n, symmetric). */
  readonly P: Mat;
  /** The LQR gain K (m × n); the centralized law is u = −K x. */
  readonly K: Mat;
  /** ‖P − riccati(P)‖_F / max(1, ‖P‖_F). */
  readonly residual: number;
  /** Spectral radius of A − BK. */
  readonly closedLoopSpectralRadius: number;
  readonly method: 'doubling' | 'iteration';
  readonly iterations: number;
}

export interface DareOptions {
  /** Accepted relative residual (default 1e-10). */
  readonly tolerance?: number;
  /** Iteration cap of the Riccati difference equation fallback (default 200000). */
  readonly maxIterations?: number;
}

const toArr = (m: math.MathType): Mat => {
  const v = math.isMatrix(m) ? (m.toArray() as number[][]) : (m as unknown as number[][]);
  return v.map((row) => row.map((x) => Number(x)));
};

/** Solve S X = Y for X (S square, Y with any number of columns): one LU factorization, a solve per column. */
export function solve(S: Mat, Y: Mat): Mat {
  const singular = () => new DareError('dare.no_convergence', `a ${S.length}×${S.length} linear system of the analysis is singular`, 'check A, B1, B2, Q and R for degenerate values (a zero weight, a repeated row, an input that acts on nothing)');
  let lup: ReturnType<typeof math.lup>;
  try {
    lup = math.lup(S);
  } catch {
    throw singular();
  }
  const U = toArr(lup.U);
  for (let i = 0; i < U.length; i++) {
    if (!(Math.abs(U[i]![i]!) > 0) || !Number.isFinite(U[i]![i]!)) throw singular();
  }
  const cols = Y[0]?.length ?? 0;
  const X: Mat = S.map(() => new Array<number>(cols).fill(0));
  for (let j = 0; j < cols; j++) {
    let x: Mat;
    try {
      x = toArr(math.lusolve(lup, Y.map((row) => [row[j]!])) as unknown as Mat);
    } catch {
      throw singular(); // a pivot too small for the back substitution
    }
    x.forEach((v, i) => (X[i]![j] = v[0]!));
  }
  return X;
}

function dims(m: Mat): [number, number] {
  return [m.length, m[0]?.length ?? 0];
}

function frob(m: Mat): number {
  let s = 0;
  for (const row of m) for (const x of row) s += x * x;
  return Math.sqrt(s);
}

function identity(n: number): Mat {
  return toArr(math.identity(n) as math.Matrix);
}

function symmetrize(m: Mat): Mat {
  return m.map((row, i) => row.map((x, j) => 0.5 * (x + (m[j]?.[i] ?? 0))));
}

/** Right-hand side of the DARE at P. */
export function riccatiMap(A: Mat, B: Mat, Q: Mat, R: Mat, P: Mat): Mat {
  const At = math.transpose(A);
  const Bt = math.transpose(B);
  const S = math.add(R, math.multiply(Bt, P, B)) as Mat;
  const BtPA = math.multiply(Bt, P, A) as Mat;
  const corr = math.multiply(math.transpose(BtPA), solve(S, BtPA)) as Mat;
  return toArr(math.add(math.subtract(math.multiply(At, P, A), corr), Q) as Mat);
}

/** Relative residual ‖P − riccati(P)‖_F / max(1, ‖P‖_F). */
export function dareResidual(A: Mat, B: Mat, Q: Mat, R: Mat, P: Mat): number {
  const d = toArr(math.subtract(P, riccatiMap(A, B, Q, R, P)) as Mat);
  return frob(d) / Math.max(1, frob(P));
}

/** K = (R + BᵀPB)⁻¹ BᵀPA. */
export function gainFromP(A: Mat, B: Mat, R: Mat, P: Mat): Mat {
  const Bt = math.transpose(B);
  const S = math.add(R, math.multiply(Bt, P, B)) as Mat;
  return solve(S, math.multiply(Bt, P, A) as Mat);
}

/**
 * The eigenvalues of a real square matrix as (re, im) pairs. ml-matrix's EigenvalueDecomposition:
 * for a non-symmetric matrix, reduction to Hessenberg form by orthogonal similarity and the
 * shifted QR algorithm to the real Schur form (the EISPACK orthes/hqr2 route, as in JAMA); for a
 * symmetric one, tridiagonal reduction and QL. (mathjs `eigs` failed to converge on ordinary
 * non-symmetric matrices of 12 to 24.) Checked against numpy.linalg.eigvals in
 * test/reference/eigen-numpy.test.ts. Entries must be finite: the QR sweep has no iteration cap.
 */
export function eigenvalues(M: Mat): { re: number; im: number }[] {
  const n = M.length;
  if (n === 0) return [];
  for (const row of M) {
    if (row.length !== n) throw new Error(`eigenvalues of a non-square matrix (${n} rows, a row of ${row.length})`);
    for (const x of row) {
      if (!Number.isFinite(x)) {
        throw new DareError('dare.no_convergence', 'a matrix of the analysis has an entry that is not a finite number (the model diverges or its values are too large)', 'check A, B1, B2, Q and R: finite values of moderate size, and a model the team can stabilise');
      }
    }
  }
  let evd: EigenvalueDecomposition;
  try {
    evd = new EigenvalueDecomposition(new Matrix(M as number[][]));
  } catch (err) {
    throw new DareError('dare.no_convergence', `the eigenvalue decomposition failed on a ${n}×${n} matrix of the analysis (${(err as Error).message})`, 'check A, B1, B2, Q and R for extreme or degenerate values');
  }
  const re = evd.realEigenvalues;
  const im = evd.imaginaryEigenvalues;
  return re.map((r, i) => ({ re: r, im: im[i]! }));
}

/**
 * Spectral radius max |λ| (complex eigenvalues handled through their modulus). A matrix with an
 * entry that overflowed (a product of many unstable steps) has a radius beyond the floating-point
 * range: Infinity.
 */
export function spectralRadius(M: Mat): number {
  for (const row of M) for (const x of row) if (!Number.isFinite(x)) return Number.POSITIVE_INFINITY;
  let r = 0;
  for (const { re, im } of eigenvalues(M)) r = Math.max(r, Math.hypot(re, im));
  return r;
}

/** Numerical rank by Gaussian elimination with full pivoting; tolerance relative to the largest entry. */
export function rank(M: Mat, relTol = 1e-10): number {
  const a = M.map((row) => row.slice());
  const rows = a.length;
  const cols = a[0]?.length ?? 0;
  let scale = 0;
  for (const row of a) for (const x of row) scale = Math.max(scale, Math.abs(x));
  if (scale === 0) return 0;
  const tol = relTol * scale * Math.max(rows, cols);
  let r = 0;
  const colUsed = new Array<boolean>(cols).fill(false);
  for (let step = 0; step < Math.min(rows, cols); step++) {
    let best = 0;
    let bi = -1;
    let bj = -1;
    for (let i = r; i < rows; i++) {
      for (let j = 0; j < cols; j++) {
        if (colUsed[j]) continue;
        const v = Math.abs(a[i]![j]!);
        if (v > best) {
          best = v;
          bi = i;
          bj = j;
        }
      }
    }
    if (best <= tol) break;
    [a[r], a[bi]] = [a[bi]!, a[r]!];
    colUsed[bj] = true;
    const piv = a[r]![bj]!;
    for (let i = r + 1; i < rows; i++) {
      const f = a[i]![bj]! / piv;
      if (f === 0) continue;
      for (let j = 0; j < cols; j++) a[i]![j]! -= f * a[r]![j]!;
    }
    r++;
  }
  return r;
}

/**
 * PBH test: (A, B) is stabilizable iff rank [A − λI, B] = n for every eigenvalue λ of A with
 * |λ| ≥ 1. Complex λ are handled through the real form [[Re, −Im], [Im, Re]], whose rank is
 * twice the complex rank. Returns the offending eigenvalue, or undefined when stabilizable.
 */
export function unstabilizableMode(A: Mat, B: Mat): { re: number; im: number } | undefined {
  const n = A.length;
  for (const lam of eigenvalues(A)) {
    if (Math.hypot(lam.re, lam.im) < 1 - 1e-9) continue;
    const re: Mat = A.map((row, i) => [...row.map((x, j) => x - (i === j ? lam.re : 0)), ...B[i]!]);
    const im: Mat = A.map((row, i) => [...row.map((_, j) => (i === j ? -lam.im : 0)), ...B[i]!.map(() => 0)]);
    let r: number;
    if (Math.abs(lam.im) < 1e-12) r = rank(re, 1e-9);
    else {
      const top = re.map((row, i) => [...row, ...im[i]!.map((x) => -x)]);
      const bottom = im.map((row, i) => [...row, ...re[i]!]);
      r = rank([...top, ...bottom], 1e-9) / 2;
    }
    if (r < n) return lam;
  }
  return undefined;
}

function isSymmetric(M: Mat, tol = 1e-9): boolean {
  const s = Math.max(1, frob(M));
  for (let i = 0; i < M.length; i++) for (let j = 0; j < i; j++) if (Math.abs(M[i]![j]! - M[j]![i]!) > tol * s) return false;
  return true;
}

/** Smallest eigenvalue of a symmetric matrix. */
export function minSymmetricEigenvalue(M: Mat): number {
  return Math.min(...eigenvalues(symmetrize(M)).map((e) => e.re));
}

function sda(A: Mat, B: Mat, Q: Mat, R: Mat, tol: number): { P: Mat; iterations: number } | undefined {
  const n = A.length;
  const I = identity(n);
  let Ak: Mat = A;
  let G: Mat = toArr(math.multiply(B, solve(R, math.transpose(B))) as Mat);
  G = symmetrize(G);
  let H: Mat = Q.map((r) => r.slice());
  for (let k = 1; k <= 80; k++) {
    const IGH = math.add(I, math.multiply(G, H)) as Mat;
    let WA: Mat;
    let WG: Mat;
    try {
      WA = solve(IGH, Ak); // (I + G H)⁻¹ A
      WG = solve(IGH, G); // (I + G H)⁻¹ G
    } catch {
      return undefined;
    }
    const Anext = toArr(math.multiply(Ak, WA) as Mat);
    const Gnext = symmetrize(toArr(math.add(G, math.multiply(Ak, WG, math.transpose(Ak))) as Mat));
    const Hnext = symmetrize(toArr(math.add(H, math.multiply(math.transpose(Ak), H, WA)) as Mat));
    if (![...Anext, ...Gnext, ...Hnext].every((row) => row.every(Number.isFinite))) return undefined;
    const change = frob(toArr(math.subtract(Hnext, H) as Mat)) / Math.max(1, frob(Hnext));
    Ak = Anext;
    G = Gnext;
    H = Hnext;
    if (change < tol * 1e-3) return { P: H, iterations: k };
  }
  return undefined;
}

function riccatiIteration(A: Mat, B: Mat, Q: Mat, R: Mat, tol: number, maxIter: number): { P: Mat; iterations: number } | undefined {
  let P: Mat = Q.map((r) => r.slice());
  for (let k = 1; k <= maxIter; k++) {
    const next = symmetrize(riccatiMap(A, B, Q, R, P));
    if (!next.every((row) => row.every(Number.isFinite))) return undefined;
    const change = frob(toArr(math.subtract(next, P) as Mat)) / Math.max(1, frob(next));
    P = next;
    if (change < tol * 1e-3) return { P, iterations: k };
  }
  return undefined;
}

/**
 * Solve the DARE for the stabilizing P and the LQR gain K. Throws DareError when the shapes
 * disagree, the weights are not allowed (Q symmetric positive semidefinite, R symmetric
 * positive definite), (A, B) is not stabilizable, or no stabilizing solution is reached.
 */
export function solveDare(A: Mat, B: Mat, Q: Mat, R: Mat, opts: DareOptions = {}): DareResult {
  const tol = opts.tolerance ?? 1e-10;
  const maxIter = opts.maxIterations ?? 200_000;
  const [n, nc] = dims(A);
  const [bn, m] = dims(B);
  if (n === 0 || n !== nc) throw new DareError('dare.bad_shape', `A must be square and non-empty, got ${n}×${nc}`, 'give A as n rows of n numbers');
  if (bn !== n || m === 0) throw new DareError('dare.bad_shape', `B must be ${n}×m with m ≥ 1, got ${bn}×${m}`, 'B has one row per state');
  if (dims(Q)[0] !== n || dims(Q)[1] !== n) throw new DareError('dare.bad_shape', `Q must be ${n}×${n}`, 'Q weighs the state');
  if (dims(R)[0] !== m || dims(R)[1] !== m) throw new DareError('dare.bad_shape', `R must be ${m}×${m}`, 'R weighs the inputs');
  if (!isSymmetric(Q) || minSymmetricEigenvalue(Q) < -1e-12 * Math.max(1, frob(Q)))
    throw new DareError('dare.bad_weights', 'Q must be symmetric positive semidefinite', 'e.g. the identity, or a diagonal of non-negative weights');
  if (!isSymmetric(R) || minSymmetricEigenvalue(R) <= 1e-12 * Math.max(1, frob(R)))
    throw new DareError('dare.bad_weights', 'R must be symmetric positive definite', 'e.g. the identity, or a diagonal of positive weights');
  const bad = unstabilizableMode(A, B);
  if (bad) {
    const lam = bad.im === 0 ? `${bad.re}` : `${bad.re} ${bad.im < 0 ? '−' : '+'} ${Math.abs(bad.im)}i`;
    throw new DareError(
      'dare.not_stabilizable',
      `(A, B) is not stabilizable: the mode of A with eigenvalue ${lam} (|λ| ≥ 1) cannot be reached by any input`,
      'the inputs (the columns of B) must reach every mode of A with |λ| ≥ 1',
    );
  }
  const accept = (cand: { P: Mat; iterations: number } | undefined, method: DareResult['method']): DareResult | undefined => {
    if (!cand) return undefined;
    const P = symmetrize(cand.P);
    const residual = dareResidual(A, B, Q, R, P);
    if (!(residual <= tol)) return undefined;
    const K = gainFromP(A, B, R, P);
    const rho = spectralRadius(toArr(math.subtract(A, math.multiply(B, K)) as Mat));
    if (!(rho < 1)) return undefined;
    return { P, K, residual, closedLoopSpectralRadius: rho, method, iterations: cand.iterations };
  };
  const result = accept(sda(A, B, Q, R, tol), 'doubling') ?? accept(riccatiIteration(A, B, Q, R, tol, maxIter), 'iteration');
  if (!result) {
    throw new DareError(
      'dare.no_convergence',
      'the Riccati equation reached no stabilizing solution',
      'every mode of A on or outside the unit circle must be seen by Q (detectability) and reached by B',
    );
  }
  return result;
}
