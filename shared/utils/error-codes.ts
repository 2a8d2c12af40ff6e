/**
 * Every machine code an error answer can carry, with its HTTP status and a readable default
 * message: the one table the server's error hook (server/plugins/00.errors.ts) answers from and
 * the client's error reader (apiErrorOf) types against. A code has one status everywhere, so a
 * station or a form can switch on the code alone; where one word once answered two statuses it
 * was split (README, "Error answers": `unit_not_found`, `product_not_found`, `category_not_found`
 * are the 404s of a path, `unknown_serial`, `unknown_product`, `unknown_category` the 422s of a
 * reference in the input).
 */
export const ERROR_CODES = {
  // Input the server cannot read.
  invalid_input: { status: 400, message: 'Some fields are not valid' },
  bad_request: { status: 400, message: 'The request could not be read' },
  missing_file: { status: 400, message: 'Attach the file in a form field named "file"' },
  bad_multipart: { status: 400, message: 'The upload could not be read' },
  empty_file: { status: 400, message: 'The file is empty' },
  label_required: { status: 400, message: 'Give the complaint category a name' },
  received_in_future: { status: 400, message: 'The date received is in the future' },
  received_too_early: { status: 400, message: 'The date received is too early' },

  // Who is asking.
  unauthenticated: { status: 401, message: 'Sign in first' },
  invalid_credentials: { status: 401, message: 'Wrong e-mail or password' },
  invalid_token: { status: 401, message: 'This station token is not valid (revoked or mistyped)' },
  forbidden: { status: 403, message: 'Your role does not allow this' },
  wrong_station: { status: 403, message: 'This token belongs to another station' },
  cross_origin: { status: 403, message: 'Changes are taken only from Conetrail\'s own pages' },

  // A resource named in the path that does not exist.
  not_found: { status: 404, message: 'Nothing here' },
  unit_not_found: { status: 404, message: 'This unit has never been tested here' },
  product_not_found: { status: 404, message: 'No such product' },
  category_not_found: { status: 404, message: 'No such complaint category' },
  unknown_lot: { status: 404, message: 'No such lot' },
  unknown_mask: { status: 404, message: 'No such mask' },
  unknown_return: { status: 404, message: 'No such return' },
  unknown_attachment: { status: 404, message: 'No such attachment' },
  unknown_person: { status: 404, message: 'No such person' },
  station_not_found: { status: 404, message: 'No such station' },
  unknown_reference_unit: { status: 404, message: 'No such reference unit' },
  invitation_unknown: { status: 404, message: 'This invitation link is not valid' },
  mailbox_off: { status: 404, message: 'The local mailbox is off' },
  unknown_message: { status: 404, message: 'No such message in the local mailbox' },
  method_not_allowed: { status: 405, message: 'This address does not take that method' },

  // A state that does not allow the change.
  duplicate_product: { status: 409, message: 'A product with this code exists' },
  product_in_use: { status: 409, message: 'Units of this product exist: it can no longer change' },
  duplicate_station: { status: 409, message: 'A station with this name exists' },
  mask_not_draft: { status: 409, message: 'Only a draft mask can change' },
  mask_not_released: { status: 409, message: 'Only a released mask can be retired' },
  mask_older_than_active: { status: 409, message: 'This draft is older than the active mask' },
  false_reject_unconfirmed: { status: 409, message: 'This mask is expected to reject more good units than the product allows: confirm the release once more' },
  reference_unit_exists: { status: 409, message: 'This unit is a reference unit already: retire it first to register it anew' },
  reference_retired: { status: 409, message: 'This reference unit is retired' },
  station_not_blocked: { status: 409, message: 'This station is not blocked' },
  no_production_test: { status: 409, message: 'This unit has no finished production test' },
  return_closed: { status: 409, message: 'This return is closed: it cannot change' },
  already_uploaded: { status: 409, message: 'This exact file was already uploaded' },
  category_exists: { status: 409, message: 'A complaint category with this name exists' },
  email_taken: { status: 409, message: 'This e-mail address already has an account' },
  last_admin: { status: 409, message: 'This is the last active admin' },
  invitation_not_pending: { status: 409, message: 'Only a pending invitation can be withdrawn' },
  invitation_used: { status: 410, message: 'This invitation link has already been used' },
  invitation_expired: { status: 410, message: 'This invitation link has expired' },
  invitation_revoked: { status: 410, message: 'This invitation was withdrawn' },

  // Uploads the server will not take.
  too_large: { status: 413, message: 'The file is larger than the upload limit' },
  not_multipart: { status: 415, message: 'Send the file as multipart/form-data' },
  unsupported_media_type: { status: 415, message: 'Send the body as JSON (application/json)' },
  unsupported_file: { status: 415, message: 'The file is neither a WAVE recording nor a text impedance table' },
  unsupported_attachment: { status: 415, message: 'Attach a photo (PNG or JPEG) or a PDF document' },
  not_wave: { status: 415, message: 'The file is not a WAVE recording' },
  unsupported_encoding: { status: 415, message: 'The recording uses an encoding the engine cannot read' },

  // Input that reads but cannot be used (the engine's refusals among them).
  unknown_serial: { status: 422, message: 'This unit has never been tested here' },
  unknown_product: { status: 422, message: 'No product with this code' },
  unknown_station: { status: 422, message: 'No active station with this id' },
  unknown_category: { status: 422, message: 'No active complaint category with this id' },
  unknown_cause_class: { status: 422, message: 'No likely-cause class with this name' },
  lot_product_mismatch: { status: 422, message: 'The lot belongs to another product' },
  unit_product_mismatch: { status: 422, message: 'The unit is of another product' },
  station_required: { status: 422, message: 'A sweep recording needs its station' },
  wrong_unit: { status: 422, message: 'The return is for another unit' },
  same_recording_other_unit: { status: 422, message: 'This exact file was already uploaded for another unit' },
  ambiguous_serial: { status: 422, message: 'Several units differ from this serial only in case' },
  disposition_required: { status: 422, message: 'Closing a return needs a disposition' },
  cause_required: { status: 422, message: 'A confirmed defect needs its cause' },
  note_required: { status: 422, message: 'Say what happened when the disposition is "other"' },
  reference_not_measured: { status: 422, message: 'The unit has too few measurements on this station for accepted values' },
  golden_not_measured: { status: 422, message: 'A golden unit has no measured result' },
  golden_wrong_product: { status: 422, message: 'A golden unit is of another product' },
  too_few_golden_units: { status: 422, message: 'A mask needs more golden units' },
  invalid_proposal_options: { status: 422, message: 'The proposal options are not valid' },
  truncated: { status: 422, message: 'The recording is cut short' },
  size_mismatch: { status: 422, message: 'The recording\'s sizes disagree with its length' },
  channel_mismatch: { status: 422, message: 'The recording\'s channels do not match the station profile' },
  sample_rate_out_of_range: { status: 422, message: 'The sample rate is outside the range the engine reads' },
  sample_rate_too_low: { status: 422, message: 'The sample rate is too low for the sweep' },
  too_short: { status: 422, message: 'The recording is shorter than the sweep' },
  clipped: { status: 422, message: 'A channel is clipped' },
  silent_drive: { status: 422, message: 'The drive channel is silent' },
  non_finite: { status: 422, message: 'The recording holds values that are not numbers' },
  duplicate_chunk: { status: 422, message: 'The recording holds a second fmt or data chunk' },
  drive_probe_fault: { status: 422, message: 'The drive-voltage probe reads nothing while the unit plays: check the probe and measure again' },
  sense_probe_fault: { status: 422, message: 'The current (sense) lead reads nothing while the unit plays: check the lead and measure again' },
  invalid_profile: { status: 422, message: 'The station profile is not valid' },
  table_too_few_points: { status: 422, message: 'The impedance table has too few points' },
  table_not_increasing: { status: 422, message: 'The impedance table\'s frequencies do not increase' },
  table_negative_magnitude: { status: 422, message: 'The impedance table holds a negative magnitude' },
  table_unparsable: { status: 422, message: 'The impedance table cannot be read' },
  table_out_of_range: { status: 422, message: 'The impedance table holds a value no measurement can give' },
  table_too_many_points: { status: 422, message: 'The impedance table has too many points' },
  table_band_too_narrow: { status: 422, message: 'The impedance table does not cover the product\'s band' },
  recording_too_long: { status: 422, message: 'The sweep is longer than the analysis reads at this sample rate' },
  not_measured: { status: 422, message: 'The recording could not measure every check: measure again' },
  invalid_limits: { status: 422, message: 'The limits are not valid' },
  too_few_points: { status: 422, message: 'Too few values for this statistic' },
  non_finite_value: { status: 422, message: 'A value is not a finite number' },
  invalid_option: { status: 422, message: 'An option is not valid' },
  unbalanced_study: { status: 422, message: 'The gauge study is missing measurements or has unequal trials' },

  // A station that may not measure production now.
  station_unverified: { status: 423, message: 'This station must be checked with its reference unit before it measures production' },

  // Too many tries.
  sign_in_limited: { status: 429, message: 'Too many failed sign-ins: wait and try again' },
  rate_limited: { status: 429, message: 'Too many requests: wait and try again' },

  // The server or a service it needs.
  internal_error: { status: 500, message: 'Something went wrong on the server' },
  invalid_config: { status: 500, message: 'The server\'s configuration cannot be used' },
  busy: { status: 503, message: 'The server is busy with other uploads: send the file again in a few seconds' },
  database_unavailable: { status: 503, message: 'The database is not reachable right now; try again in a few seconds' },
  mail_not_configured: { status: 503, message: 'No SMTP server is configured and no local mail sink is running' },
  mail_failed: { status: 503, message: 'The mail server refused the message' },
  storage_unavailable: { status: 507, message: 'The recording store cannot take the file' },
} as const satisfies Record<string, { status: number; message: string }>

export type ErrorCode = keyof typeof ERROR_CODES

/** Whether a value is one of the codes above (a client reading an answer, the hook reading an error). */
export function isErrorCode(value: unknown): value is ErrorCode {
  return typeof value === 'string' && Object.hasOwn(ERROR_CODES, value)
}

/**
 * The code an error answer without one gets, by its status (a 404 for an unknown path, a 405,
 * a 413 or 429 from a module that sets no code), so every error body carries data.code.
 */
export function codeForStatus(status: number): ErrorCode {
  const byStatus: Record<number, ErrorCode> = { 400: 'bad_request', 401: 'unauthenticated', 403: 'forbidden', 404: 'not_found', 405: 'method_not_allowed', 413: 'too_large', 415: 'not_multipart', 429: 'rate_limited' }
  return byStatus[status] ?? (status >= 500 ? 'internal_error' : 'bad_request')
}
