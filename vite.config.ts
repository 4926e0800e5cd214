import { existsSync } from 'node:fs';
import path from 'node:path';
import { defineConfig, type Plugin } from 'vite';
import vue from '@vitejs/plugin-vue';

const apiPort = Number(process.env.PORT ?? 5170);

/**
 * Element Plus's CSS per component: for every `import { ElX } from 'element-plus'` in our code the
 * component's own style module is imported beside it, so the bundle carries the styles of the
 * components we use instead of the whole theme (src/main.ts imports only the base variables).
 */
export function elementPlusStyles(): Plugin {
  const components = path.resolve('node_modules/element-plus/es/components');
  const kebab = (name: string) =>
    name
      .replace(/^(El|v)(?=[A-Z])/, '')
      .replace(/([a-z0-9])([A-Z])/g, '$1-$2')
      .toLowerCase();
  return {
    name: 'driftbench-element-plus-styles',
    enforce: 'post',
    transform(code, id) {
      if (id.includes('node_modules') || !/\.(vue|ts)(\?|$)/.test(id)) return null;
      const styles = new Set<string>();
      for (const m of code.matchAll(/import\s*\{([^}]*)\}\s*from\s*['"]element-plus['"]/g)) {
        for (const raw of m[1].split(',')) {
          const name = raw
            .trim()
            .split(/\s+as\s+/)[0]
            .replace(/^type\s+/, '');
          if (!/^(El|v)[A-Z]/.test(name)) continue;
          const dir = kebab(name);
          if (existsSync(path.join(components, dir, 'style', 'css.mjs')))
            styles.add(`import 'element-plus/es/components/${dir}/style/css';`);
        }
      }
      return styles.size ? { code: `${[...styles].join('\n')}\n${code}`, map: null } : null;
    },
  };
}

export default defineConfig({
  plugins: [vue(), elementPlusStyles()],
  server: {
    host: '127.0.0.1',
    port: 5173,
    proxy: {
      '/api': `http://127.0.0.1:${apiPort}`,
      '/ws': { target: `ws://127.0.0.1:${apiPort}`, ws: true },
      '/sim': { target: `ws://127.0.0.1:${apiPort}`, ws: true },
    },
  },
  build: {
    outDir: 'dist',
    emptyOutDir: true,
    chunkSizeWarningLimit: 900,
  },
});
