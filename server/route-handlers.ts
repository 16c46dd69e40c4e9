import type { Request, RequestHandler, Response } from 'express'
import type { Action, AppAbility, SubjectName } from '../shared/abilities/index.ts'
import type { z } from 'zod'
import { IdSchema, parsePatch } from '../shared/schemas/common.ts'
import { authorize } from './authorize.ts'
import type { AppDeps } from './deps.ts'
import type { AuditContext } from './features/audit/audit.repository.ts'

/** What checks a request body: a zod schema, or a function such as `(body) => parsePatch(Schema, body)`. */
export type BodyReader<I> = { parse(body: unknown): I } | ((body: unknown) => I)

/** Middleware: 403 unless the user may do `action` on the subject at some site, before the body (an upload) is read. */
export const allowedTo =
  (action: Action, name: Exclude<SubjectName, 'all'>): RequestHandler =>
  (req, _res, next) => {
    authorize(req.ability, action, name)
    next()
  }

/**
 * Marks the answer as a file to save: its content type and the file name the browser offers. Returns `res`, so a
 * download reads `asDownload(res, 'application/pdf', name).send(pdf)`; a streamed one writes its body afterwards.
 */
export function asDownload(res: Response, contentType: string, fileName: string): Response {
  res.setHeader('Content-Type', contentType)
  res.setHeader('Content-Disposition', `attachment; filename="${fileName}"`)
  return res
}

/** The body of a PATCH: the fields it sends, checked by `schema` (parsePatch). */
export const patchOf =
  <T extends z.ZodType>(schema: T) =>
  (body: unknown) =>
    parsePatch(schema, body)

/** The record's id from the path: `:id` unless a router says otherwise. */
export type IdReader = (req: Request) => number

const pathId: IdReader = (req) => IdSchema.parse(req.params.id)

function readBody<I>(reader: BodyReader<I>, body: unknown): I {
  return typeof reader === 'function' ? reader(body) : reader.parse(body)
}

type Reads<R> = (deps: AppDeps, ability: AppAbility, id: number) => Promise<R>
type Creates<I, R> = (deps: AppDeps, ability: AppAbility, audit: AuditContext, input: I) => Promise<R>
type Acts<R> = (deps: AppDeps, ability: AppAbility, audit: AuditContext, id: number) => Promise<R>
type ActsWith<I, R> = (deps: AppDeps, ability: AppAbility, audit: AuditContext, id: number, input: I) => Promise<R>

/**
 * The handlers of a resource's usual routes, each calling one service function with the request's ability, audit
 * context, the record's id and the checked body, and sending its answer as JSON (docs/architecture.md, "Request
 * flow"). A router then reads as the table of its actions:
 *
 * ```ts
 * const route = routeHandlers(deps)
 * router.get('/:id', route.read(service.getBypass))
 * router.post('/', route.create(CreateBypassInputSchema, service.requestBypass))
 * router.post('/:id/removal', route.act(RemoveBypassInputSchema, service.removeBypass))
 * router.post('/:id/cancellation', route.act(service.cancelBypass))
 * ```
 *
 * The handlers are async: a refused id or body (ZodError → 400) or a service's error rejects, and Express passes it to
 * the error handler. The id is read before the body. A route of another shape keeps its own handler.
 */
export function routeHandlers(deps: AppDeps, idOf: IdReader = pathId) {
  function act<R>(run: Acts<R>): RequestHandler
  function act<I, R>(body: BodyReader<I>, run: ActsWith<I, R>): RequestHandler
  function act<I, R>(first: BodyReader<I> | Acts<R>, run?: ActsWith<I, R>): RequestHandler {
    return async (req, res) => {
      const id = idOf(req)
      if (!run) res.json(await (first as Acts<R>)(deps, req.ability, req.audit, id))
      else res.json(await run(deps, req.ability, req.audit, id, readBody(first as BodyReader<I>, req.body)))
    }
  }
  return {
    /** `GET /:id`: `run(deps, ability, id)`. */
    read:
      <R>(run: Reads<R>): RequestHandler =>
      async (req, res) => {
        res.json(await run(deps, req.ability, idOf(req)))
      },
    /** `POST /`: `run(deps, ability, audit, input)`, answered 201. */
    create:
      <I, R>(body: BodyReader<I>, run: Creates<I, R>): RequestHandler =>
      async (req, res) => {
        res.status(201).json(await run(deps, req.ability, req.audit, readBody(body, req.body)))
      },
    /** `POST /:id/<action>`, `PUT` or `PATCH /:id`: `run(deps, ability, audit, id)`, or with the checked body last. */
    act,
  }
}
