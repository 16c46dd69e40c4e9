import { createApp } from 'vue'
import App from './App.vue'
import { registerPlugins } from './plugins'
import router from './router'

const app = createApp(App)
registerPlugins(app)
// index.html's loading shell stays on screen until the first page's session and code are in, then the page replaces
// it in one step (docs/architecture.md#first-load)
void router
  .isReady()
  .catch(() => undefined)
  .then(() => app.mount('#app'))
