// Late-bound calls between workspace modules.
//
// A few modules need a function of a module that imports them (the marks list redraws the
// table, the table selects a mark). Importing both ways would make a cycle, which the
// static-file storage cannot give content-hashed names to, so the module lower in the
// graph asks for the function here by name and the module higher up provides it.

const provided = new Map();

export function provide(name, fn) {
  provided.set(name, fn);
}

export function call(name, ...args) {
  const fn = provided.get(name);
  if (!fn) {
    throw new Error(`workspace: "${name}" is called before its module has loaded`);
  }
  return fn(...args);
}
