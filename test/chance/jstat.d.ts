// jstat 1.9.6 ships no type declarations; the tests use only these calls.
declare module 'jstat' {
  interface Discrete {
    pdf(k: number, ...params: number[]): number;
    cdf(k: number, ...params: number[]): number;
  }
  const jStat: { poisson: Discrete; binomial: Discrete; chisquare: Discrete };
  export default jStat;
}
