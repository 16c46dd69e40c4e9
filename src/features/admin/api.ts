import type { ListQueryInput, ListResult } from '@shared/schemas/common.ts'
import type { Area, CreateAreaInput, CreateSiteInput, Site, UpdateSiteInput } from '@shared/schemas/sites.ts'
import type { CreateUserInput, UpdateUserInput, User } from '@shared/schemas/users.ts'
import { http } from '@/api/client'

/** Cache keys of the accounts (Pinia Colada); sites and areas live in the sites store. */
export const userKeys = {
  all: ['users'] as const,
  list: (q: ListQueryInput) => ['users', 'list', JSON.stringify(q)] as const,
}

export const listUsers = (query: ListQueryInput) => http.get<ListResult<User>>('/users', { ...query })
export const createUser = (input: CreateUserInput) => http.post<User>('/users', input)
export const updateUser = (id: number, input: UpdateUserInput) => http.patch<User>(`/users/${id}`, input)

export const createSite = (input: CreateSiteInput) => http.post<Site>('/sites', input)
export const updateSite = (id: number, input: UpdateSiteInput) => http.patch<Site>(`/sites/${id}`, input)
export const createArea = (input: CreateAreaInput) => http.post<Area>('/areas', input)
