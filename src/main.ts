import { createApp } from 'vue';
import { createPinia } from 'pinia';
import '@fontsource/inter/400.css';
import '@fontsource/inter/500.css';
import '@fontsource/inter/600.css';
import 'element-plus/theme-chalk/el-message.css';
import 'element-plus/theme-chalk/el-overlay.css';
import 'element-plus/theme-chalk/el-message-box.css';
import '@/styles/main.css';
import App from '@/App.vue';
import { router } from '@/router';
import { setUnauthenticatedHandler } from '@/api/client';
import { useSessionStore } from '@/stores/session';

const app = createApp(App);
app.use(createPinia());
app.use(router);

setUnauthenticatedHandler(() => {
  useSessionStore().forget();
  if (router.currentRoute.value.name !== 'sign-in') {
    void router.push({ name: 'sign-in', query: { next: router.currentRoute.value.fullPath, expired: '1' } });
  }
});

app.mount('#app');
