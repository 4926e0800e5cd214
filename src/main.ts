import { createApp } from 'vue';
import { createPinia } from 'pinia';

import '@fontsource/source-sans-3/400.css';
import '@fontsource/source-sans-3/600.css';
import '@fontsource/source-sans-3/700.css';
// Element Plus: the base variables here; each component's own CSS comes with its import (vite.config.ts).
import 'element-plus/theme-chalk/base.css';
import 'element-plus/theme-chalk/dark/css-vars.css';
import './styles/index.css';

import App from './App.vue';
import { createAppRouter } from './router';

const app = createApp(App);
app.use(createPinia());
app.use(createAppRouter());
app.mount('#app');
