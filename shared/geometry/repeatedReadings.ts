/**
 * Statistics of n repeated readings of one quantity (JCGM 100:2008, the GUM, section 4.2):
 * the arithmetic mean (4.2.1), the experimental standard deviation s with n - 1 in the divisor (4.2.2),
 * and the experimental standard deviation of the mean s / sqrt(n), the standard uncertainty of the mean
 * (4.2.3). With fewer than two readings s is undefined: NaN.
 * Two passes (mean first, then squared deviations) keep s accurate when the spread is tiny against the
 * mean, as it is for ranges of metres repeated to millimetres.
 */
export interface ReadingStatistics {
  count: number
  mean: number
  standardDeviation: number
  standardErrorOfMean: number
}

export function readingStatistics(
  values: ArrayLike<number>,
  count = values.length,
  out: ReadingStatistics = { count: 0, mean: NaN, standardDeviation: NaN, standardErrorOfMean: NaN },
): ReadingStatistics {
  out.count = count
  if (count <= 0) {
    out.mean = NaN
    out.standardDeviation = NaN
    out.standardErrorOfMean = NaN
    return out
  }
  let sum = 0
  for (let i = 0; i < count; i++) sum += values[i] as number
  const mean = sum / count
  out.mean = mean
  if (count < 2) {
    out.standardDeviation = NaN
    out.standardErrorOfMean = NaN
    return out
  }
  let squares = 0
  for (let i = 0; i < count; i++) {
    const d = (values[i] as number) - mean
    squares += d * d
  }
  const s = Math.sqrt(squares / (count - 1))
  out.standardDeviation = s
  out.standardErrorOfMean = s / Math.sqrt(count)
  return out
}
