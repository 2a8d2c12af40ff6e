/**
 * The server's log line for an unexpected error: the request id, the method and the path, the
 * error and where it was thrown, and never a secret from the URL (an invitation token in the path,
 * a token in the query) or from the failed query (the values knex would put in its message).
 */
import { IncomingMessage, ServerResponse } from 'node:http'
import { Socket } from 'node:net'
import { createError, createEvent } from 'h3'
import { afterEach, describe, expect, it, vi } from 'vitest'
import { knexConfig } from '../../knexfile'
import { loggableError, loggablePath, shapeErrorAnswer } from '../../server/utils/errors'

const TOKEN = 'q1W2e3R4t5Y6u7I8o9P0a1S2d3F4g5H6j7K8l9Z0x1C'
const HASH = '$scrypt$n=16384,r=8,p=1$c2FsdHNhbHRzYWx0$Zm9vYmFyYmF6cXV4Zm9vYmFyYmF6cXV4Zm9vYmFyYmF6cXV4Zm9vYmFy'

/** A request as Node hands it to h3, with this method and URL. */
function eventFor(method: string, url: string) {
  const req = new IncomingMessage(new Socket())
  req.method = method
  req.url = url
  return createEvent(req, new ServerResponse(req))
}

/** A database error as knex reports it when it formats the values into its message. */
function failedInsert(): Error {
  const err = new Error(`insert into "users" ("display_name", "password_hash") values ('Ann', '${HASH}') - invalid byte sequence for encoding "UTF8": 0x00`)
  Object.assign(err, { code: '22021', detail: `token ${TOKEN}` })
  return err
}

afterEach(() => vi.restoreAllMocks())

describe('the error log line', () => {
  it.each([
    [`/api/invitations/accept/${TOKEN}`, '/api/invitations/accept/…'],
    [`/api/invitations/accept/${TOKEN}?token=${TOKEN}&next=%2Flots`, '/api/invitations/accept/…'],
    ['/api/units/WF8-2412-00017?q=ab', '/api/units/WF8-2412-00017'],
    ['/api/causes/fsHz:high', '/api/causes/fsHz:high'],
    ['/api/x%3Ftoken%3Dshort/y', '/api/…/y'],
    ['/api/x;session=abc/y', '/api/…/y'],
  ])('logs the path %s as %s', (path, logged) => {
    expect(loggablePath(path)).toBe(logged)
  })

  it('holds the request id, method, path and the error, but no token and no query value', () => {
    const lines: string[] = []
    vi.spyOn(console, 'error').mockImplementation((...args: unknown[]) => void lines.push(args.map(String).join(' ')))
    const error = createError({ statusCode: 500, message: 'boom', cause: failedInsert() })
    const event = eventFor('POST', `/api/invitations/accept/${TOKEN}?token=${TOKEN}&other=zzzzzzzz`)
    shapeErrorAnswer(error, event)

    expect(lines).toHaveLength(1)
    const line = lines[0]!
    const requestId = (error.data as { requestId: string }).requestId
    expect(line).toContain(`[request error] request ${requestId} POST /api/invitations/accept/…`)
    expect(line).toContain('invalid byte sequence for encoding "UTF8"')
    expect(line).toContain('[22021]')
    // Where it was thrown stays in the log.
    expect(line).toMatch(/\n\s+at /)
    for (const secret of [TOKEN, HASH.split('$').at(-1)!, 'zzzzzzzz']) expect(line).not.toContain(secret)
    // Nitro's own handler logs an unhandled or fatal error with the whole URL: this one is neither.
    expect(error.unhandled).toBe(false)
    expect(error.fatal).toBe(false)
    expect(error.statusCode).toBe(500)
  })

  it('writes nothing for an expected refusal, and still marks it handled', () => {
    const spy = vi.spyOn(console, 'error').mockImplementation(() => {})
    const error = createError({ statusCode: 404, message: 'nothing', fatal: true })
    shapeErrorAnswer(error, eventFor('GET', `/invite/${TOKEN}`))
    expect(spy).not.toHaveBeenCalled()
    expect([error.unhandled, error.fatal]).toEqual([false, false])
  })

  it('cuts a query and a token-like run from a message, and follows the cause', () => {
    const outer = new Error(`[POST] "http://127.0.0.1:3000/api/x?token=${TOKEN}": 500`, { cause: failedInsert() })
    const text = loggableError(outer)
    expect(text).toContain('[POST] "http://127.0.0.1:3000/api/x?…": 500')
    expect(text).toContain('caused by Error [22021]: insert into "users"')
    expect(text).not.toContain(TOKEN)
    expect(text).not.toContain(HASH.split('$').at(-1)!)
  })

  it('has the database layer keep values out of a failed query’s message', () => {
    expect(knexConfig('postgres://u@127.0.0.1:1/x').compileSqlOnError).toBe(false)
  })
})
