import type { ListQueryInput, ListResult } from '@shared/schemas/common.ts'
import type { ChangeOwnPasswordInput, CreateUserInput, UpdateUserInput, User } from '@shared/schemas/users.ts'
import { http } from '@/api/client'

/** Cache keys of the accounts (Pinia Colada). */
export const userKeys = {
  all: ['users'] as const,
  list: (q: ListQueryInput) => ['users', 'list', JSON.stringify(q)] as const,
}

export const listUsers = (query: ListQueryInput) => http.get<ListResult<User>>('/users', { ...query })
export const createUser = (input: CreateUserInput) => http.post<User>('/users', input)
export const updateUser = (id: number, input: UpdateUserInput) => http.patch<User>(`/users/${id}`, input)

/** The signed-in user's own password (My account). */
export const changeOwnPassword = (input: ChangeOwnPasswordInput) => http.post<void>('/account/password', input)
