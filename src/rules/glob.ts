/**
 * Globs on channel names and file names, with no dependencies: rule selectors, channel
 * tables and checks that group channels by name share it.
 */

/**
 * Whether `name` matches `glob`: `*` matches any run of characters (also none), `?` exactly
 * one character; every other character matches only itself (there is no escape, no class,
 * no regular expression). Case-sensitive. Characters are Unicode code points.
 *
 * Greedy matching with backtracking to the last `*` only: at most
 * O(glob length × name length) steps, so no pattern can make it slow.
 */
export function globMatch(glob: string, name: string): boolean {
  const g = Array.from(glob);
  const n = Array.from(name);
  let gi = 0;
  let ni = 0;
  let starG = -1;
  let starN = 0;
  while (ni < n.length) {
    if (gi < g.length && (g[gi] === '?' || (g[gi] !== '*' && g[gi] === n[ni]))) {
      gi++;
      ni++;
    } else if (gi < g.length && g[gi] === '*') {
      starG = gi++;
      starN = ni;
    } else if (starG >= 0) {
      // Let the last `*` take one more character and try again from there.
      gi = starG + 1;
      ni = ++starN;
    } else {
      return false;
    }
  }
  while (gi < g.length && g[gi] === '*') gi++;
  return gi === g.length;
}
