/**
 * Minimal type declarations for the parts of jstat 1.9.6 that Keepwell uses.
 * jstat ships no types; its CommonJS build exports the jStat object as
 * `module.exports`, so it is consumed as a default import.
 */
declare module 'jstat' {
  interface JStatStudentT {
    pdf(x: number, dof: number): number;
    cdf(x: number, dof: number): number;
    inv(p: number, dof: number): number;
  }

  interface JStatCentralF {
    pdf(x: number, df1: number, df2: number): number;
    cdf(x: number, df1: number, df2: number): number;
    inv(p: number, df1: number, df2: number): number;
  }

  interface JStatStatic {
    studentt: JStatStudentT;
    centralF: JStatCentralF;
    /** Regularized incomplete beta function I_x(a, b). */
    ibeta(x: number, a: number, b: number): number;
    /** Inverse of the regularized incomplete beta function. */
    ibetainv(p: number, a: number, b: number): number;
  }

  const jStat: JStatStatic;
  export default jStat;
}
