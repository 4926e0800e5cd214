// @vitest-environment happy-dom
import { afterEach, beforeEach, describe, expect, it, vi } from 'vitest';
import { flushPromises, mount } from '@vue/test-utils';
import { createPinia, setActivePinia } from 'pinia';
import { createMemoryHistory } from 'vue-router';
import { createAppRouter } from '../../../src/router';
import SignInView from '../../../src/views/SignInView.vue';
import { queueFetch, technician } from './helpers';

async function mountAt(path: string) {
  const pinia = createPinia();
  setActivePinia(pinia);
  const router = createAppRouter(createMemoryHistory());
  await router.push(path);
  await router.isReady();
  const wrapper = mount(SignInView, {
    global: { plugins: [pinia, router] },
    attachTo: document.body,
  });
  return { wrapper, router };
}

describe('sign-in page', () => {
  beforeEach(() => localStorage.clear());
  afterEach(() => {
    vi.unstubAllGlobals();
    document.body.innerHTML = '';
  });

  it('explains an expired session', async () => {
    const { wrapper } = await mountAt('/sign-in?reason=expired');
    expect(wrapper.text()).toContain('Your session has expired — please sign in again');
  });

  it('shows the rate-limit answer inline', async () => {
    queueFetch({
      status: 429,
      body: { error: { code: 'rate-limited', message: 'Too many requests' } },
    });
    const { wrapper } = await mountAt('/sign-in');
    await wrapper.find('input[name="email"]').setValue('technician@kestrelbay.example');
    await wrapper.find('input[name="password"]').setValue('wrong-password');
    await wrapper.find('form').trigger('submit');
    await vi.waitFor(() => expect(wrapper.find('[role="alert"]').exists()).toBe(true));
    expect(wrapper.find('[role="alert"]').text()).toMatch(/Too many sign-in attempts/);
  });

  it('signs in and goes to the page asked for', async () => {
    queueFetch({ body: { token: 'jwt', user: technician } });
    const { wrapper, router } = await mountAt('/sign-in?next=/lab');
    await wrapper.find('input[name="email"]').setValue('technician@kestrelbay.example');
    await wrapper.find('input[name="password"]').setValue('driftbench-demo');
    await wrapper.find('form').trigger('submit');
    await vi.waitFor(() => expect(router.currentRoute.value.name).toBe('lab'));
    await flushPromises();
  });
});
