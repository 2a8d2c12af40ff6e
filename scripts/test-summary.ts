/** Prints "N passed, N failed" from vitest's JSON report; exits 1 when anything failed or nothing ran. */
import { readFileSync } from 'node:fs'

interface Report {
  numPassedTests: number
  numFailedTests: number
  numPendingTests?: number
  numTodoTests?: number
  numFailedTestSuites?: number
  success?: boolean
}

const report = JSON.parse(readFileSync(process.argv[2] ?? 'test-results/vitest.json', 'utf8')) as Report
// A suite that failed to load counts as one failure even though none of its tests ran.
const failed = report.numFailedTests + (report.numFailedTests === 0 && report.numFailedTestSuites ? report.numFailedTestSuites : 0)
const skipped = (report.numPendingTests ?? 0) + (report.numTodoTests ?? 0)
console.log(`${report.numPassedTests} passed, ${failed} failed${skipped ? `, ${skipped} skipped` : ''}`)
process.exit(failed > 0 || report.numPassedTests === 0 ? 1 : 0)
