/**
 * Automatic number of principal components: the broken-stick rule.
 *
 * Formula: with r non-zero eigenvalues and proportions π_a = λ_a / Σλ, the broken-stick expectation
 * is b_a = (1/r) Σ_{i=a}^{r} 1/i; keep components 1…k while π_a > b_a, stopping at the first a
 * that fails. Then k is clamped to 1 ≤ k ≤ min(n − 2, r − 1) so that the T² limit exists and a
 * residual space remains for Q.
 * Source: Frontier (1976) J. Exp. Mar. Biol. Ecol. 25:67; Jackson (1993) "Stopping rules in principal
 * components analysis: a comparison of heuristical and statistical approaches", Ecology 74:2204, and
 * Peres-Neto, Jackson & Somers (2005) Comput. Stat. Data Anal. 49:974, who found it among the most
 * reliable simple rules. Adaptation (ours): r is the number of non-zero eigenvalues rather than p,
 * because with n ≪ p (OES) only n − 1 eigenvalues are non-zero and a stick of p pieces would keep
 * pure-noise components.
 *
 * @param eigenvalues non-zero eigenvalues, largest first
 * @param n number of golden rows
 * @returns the number of components k
 * @throws RangeError when fewer than 2 non-zero eigenvalues or fewer than 3 rows leave no valid k
 * @example brokenStickComponents([5, 3, 0.5, 0.3, 0.2], 50) // → 2
 */
export function brokenStickComponents(eigenvalues: ArrayLike<number>, n: number): number {
	const r = eigenvalues.length;
	const kMax = Math.min(n - 2, r - 1);
	if (kMax < 1)
		throw new RangeError(
			`no valid number of components: ${r} non-zero eigenvalue(s) and ${n} rows (need k ≤ n − 2 and k < rank)`
		);
	let total = 0;
	for (let a = 0; a < r; a++) total += eigenvalues[a];
	const b = new Float64Array(r + 1);
	let tail = 0;
	for (let a = r; a >= 1; a--) {
		tail += 1 / a;
		b[a] = tail / r;
	}
	let k = 0;
	while (k < r && eigenvalues[k] / total > b[k + 1]) k++;
	return Math.min(Math.max(k, 1), kMax);
}
