import type { Area, CreateAreaInput, CreateSiteInput, Site, UpdateSiteInput } from '@shared/schemas/sites.ts'
import { http } from '@/api/client'

// Writing sites, areas and site policies; the lists are read through the sites store (src/stores/sites.ts).

export const createSite = (input: CreateSiteInput) => http.post<Site>('/sites', input)
export const updateSite = (id: number, input: UpdateSiteInput) => http.patch<Site>(`/sites/${id}`, input)
export const createArea = (input: CreateAreaInput) => http.post<Area>('/areas', input)
