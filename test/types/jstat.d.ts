// jstat ships no type declarations; the tests use only these two functions.
declare module 'jstat' {
  const jStat: { skewness(x: number[]): number; kurtosis(x: number[]): number };
  export default jStat;
}
