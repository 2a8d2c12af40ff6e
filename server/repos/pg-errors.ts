/** PostgreSQL's unique_violation (SQLSTATE 23505): the row a caller meant to create already exists. */
export function isUniqueViolation(err: unknown): boolean {
  return typeof err === 'object' && err !== null && (err as { code?: string }).code === '23505'
}
