import type { ListResult } from '@shared/schemas/common.ts'
import type { Area, Site, SitePolicy } from '@shared/schemas/sites.ts'
import type { CreateUserInput, UpdateUserInput, User } from '@shared/schemas/users.ts'
import { http } from '@/api/client'

export const listUsers = (query: { page: number; pageSize: number; q?: string }) =>
  http.get<ListResult<User>>('/users', query)
export const createUser = (input: CreateUserInput) => http.post<User>('/users', input)
export const updateUser = (id: number, input: UpdateUserInput) => http.patch<User>(`/users/${id}`, input)
export const createSite = (input: { code: string; name: string; timeZone: string }) => http.post<Site>('/sites', input)
export const updateSite = (id: number, input: { name?: string; timeZone?: string; policy?: Partial<SitePolicy> }) =>
  http.patch<Site>(`/sites/${id}`, input)
export const createArea = (input: { siteId: number; name: string }) => http.post<Area>('/areas', input)
