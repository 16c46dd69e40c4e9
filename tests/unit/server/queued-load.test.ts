import { describe, expect, it, vi } from 'vitest'
import type { AppDeps } from '../../../server/deps.ts'
import { runQueuedLoad } from '../../../server/features/alarms/copy-load.ts'

// The frame of the alarm area's background loads (docs/alarms.md): one run per upload at a time in a process, and an
// upload left queued is taken up again by a later run (common practice for a job queue: a failed pick-up retries).
describe('runQueuedLoad', () => {
  it('leaves the upload queued for the next run when no database connection can be had', async () => {
    const deps = { pool: { connect: vi.fn().mockRejectedValue(new Error('database away')) } } as unknown as AppDeps
    const job = {
      find: vi.fn().mockResolvedValue({ site_id: 1, status: 'queued', file_path: '/nonexistent/upload.csv' }),
      markRunning: vi.fn(),
      load: vi.fn(),
      fail: vi.fn(),
    }
    await expect(runQueuedLoad(deps, 'journal:7', job)).rejects.toThrow('database away')
    await expect(runQueuedLoad(deps, 'journal:7', job)).rejects.toThrow('database away')
    expect(job.find).toHaveBeenCalledTimes(2)
    expect(job.markRunning).not.toHaveBeenCalled()
    expect(job.fail).not.toHaveBeenCalled()
  })

  it('marks a load that fails as failed, once, and releases its connection', async () => {
    const release = vi.fn()
    const deps = { pool: { connect: vi.fn().mockResolvedValue({ release }) } } as unknown as AppDeps
    const job = {
      find: vi.fn().mockResolvedValue({ site_id: 1, status: 'queued', file_path: '/nonexistent/upload.csv' }),
      markRunning: vi.fn().mockResolvedValue(undefined),
      load: vi.fn(),
      fail: vi.fn().mockResolvedValue(undefined),
    }
    await runQueuedLoad(deps, 'journal:8', job)
    expect(job.fail).toHaveBeenCalledTimes(1)
    expect(job.load).not.toHaveBeenCalled()
    expect(release).toHaveBeenCalledTimes(1)
  })
})
