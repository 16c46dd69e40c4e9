import { describe, expect, it } from 'vitest'
import { registerListQuery } from '@/features/register/composables/useRegisterQuery'

// The request the router starts on first load for a register URL (docs/architecture.md#first-load). The screen reads
// the same URL with the same function, so the answer asked early is the one the screen takes; these checks pin the
// URL rules the screen documents (common practice: defaults page 1 and 50 rows, unknown values fall back).
describe('registerListQuery', () => {
  it('asks for page 1 of 50 rows in the default order when the URL has no query', () => {
    expect(registerListQuery({})).toEqual({ sort: undefined, page: 1, pageSize: 50 })
  })

  it('keeps the filters, sort, page and page size of the URL, lists repeated and empty values left out', () => {
    expect(
      registerListQuery({
        siteId: ['1', '2'],
        limitClass: 'trip',
        status: ['active', ''],
        q: 'tshh',
        hasErrors: 'true',
        sort: '-setpoint,tag',
        page: '3',
        pageSize: '100',
      }),
    ).toEqual({
      siteId: [1, 2],
      limitClass: ['trip'],
      status: ['active'],
      hasErrors: 'true',
      q: 'tshh',
      sort: '-setpoint,tag',
      page: 3,
      pageSize: 100,
    })
  })

  it('falls back on malformed values: ids that are not positive integers, a page size not offered, page 0', () => {
    expect(
      registerListQuery({ areaId: ['x', '-4', '7'], hasWarnings: 'maybe', page: '0', pageSize: '7', q: '  ' }),
    ).toEqual({ areaId: [7], sort: undefined, page: 1, pageSize: 50 })
  })
})
