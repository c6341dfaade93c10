// electron-builder `beforeBuild` hook (electron-builder.yml). The app has no node_modules: its
// main process and preload are bundled into single files that need only Electron and Node's own
// modules (bin/build-editor.mjs), and the page is built by Vite. Resolving to false tells
// electron-builder that node_modules are handled outside it, so it neither rebuilds nor packs any
// (otherwise it would pack the command line's dependencies from the project folder).
module.exports = async function beforeBuild() {
  return false;
};
