// jstat 1.9 ships no types; only the few functions Driftbench calls are declared.
declare module 'jstat' {
  interface JStatStatic {
    chisquare: { inv(p: number, dof: number): number; cdf(x: number, dof: number): number };
    normal: { inv(p: number, mean: number, sd: number): number };
    studentt: { inv(p: number, dof: number): number };
  }
  const jStat: JStatStatic;
  export default jStat;
}
