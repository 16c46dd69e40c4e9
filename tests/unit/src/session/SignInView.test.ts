import { mount } from '@vue/test-utils'
import { createPinia } from 'pinia'
import { afterEach, beforeEach, describe, expect, it, vi } from 'vitest'
import { createMemoryHistory, createRouter } from 'vue-router'
import { createVuetify } from 'vuetify'
import SignInView from '@/features/session/views/SignInView.vue'

// The sign-in form focuses the e-mail field once, when it appears, and never takes focus back: a password being typed
// must not land in the visible e-mail field, however late the browser reports that the form became visible.

/** An IntersectionObserver that reports "visible" late, as a busy browser does (after the person started typing). */
class LateObserver {
  constructor(private readonly cb: IntersectionObserverCallback) {}
  observe(target: Element) {
    setTimeout(
      () => this.cb([{ isIntersecting: true, target } as unknown as IntersectionObserverEntry], this as never),
      500,
    )
  }
  unobserve() {}
  disconnect() {}
  takeRecords() {
    return []
  }
}

describe('SignInView focus', () => {
  beforeEach(() => {
    vi.useFakeTimers()
    vi.stubGlobal('IntersectionObserver', LateObserver)
  })
  afterEach(() => {
    vi.useRealTimers()
    vi.unstubAllGlobals()
  })

  it('focuses the e-mail field on mount and leaves the password field focused once the person moved there', async () => {
    const router = createRouter({ history: createMemoryHistory(), routes: [{ path: '/', component: SignInView }] })
    await router.push('/')
    const wrapper = mount(SignInView, {
      attachTo: document.body,
      global: { plugins: [createVuetify(), createPinia(), router] },
    })
    await vi.advanceTimersByTimeAsync(0)
    const email = wrapper.find<HTMLInputElement>('input[name="email"]').element
    const password = wrapper.find<HTMLInputElement>('input[name="password"]').element
    expect(document.activeElement).toBe(email)

    // the person tabs to the password field and types; then the late "visible" report and its timers arrive
    password.focus()
    expect(document.activeElement).toBe(password)
    await vi.advanceTimersByTimeAsync(2_000)
    expect(document.activeElement).toBe(password)
    wrapper.unmount()
  })
})
