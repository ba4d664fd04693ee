"""The container lock file against pyproject.toml, so that the two cannot drift apart.

`requirements/container.lock` is compiled by ``uv pip compile`` (its header gives the
command) for the image's platform: CPython 3.11 on Linux x86_64 (Debian bookworm). The image
installs it with ``--no-deps --require-hashes`` and builds the project without build isolation,
so every runtime dependency and the build backend must be pinned there, inside the ranges that
pyproject.toml declares. Requirement and marker semantics are those of the `packaging` library
(PEP 508 requirements, PEP 440 specifiers).
"""

from __future__ import annotations

import re
import tomllib
from pathlib import Path

import pytest
from packaging.markers import Marker
from packaging.requirements import Requirement
from packaging.utils import canonicalize_name
from packaging.version import Version

ROOT = Path(__file__).resolve().parents[1]
LOCK = ROOT / "requirements" / "container.lock"

#: The image's interpreter and platform, as PEP 508 marker variables (python:3.11 or bookworm).
IMAGE_ENVIRONMENT = {
    "implementation_name": "cpython",
    "platform_python_implementation": "CPython",
    "python_version": "3.11",
    "python_full_version": "3.11.2",
    "os_name": "posix",
    "sys_platform": "linux",
    "platform_system": "Linux",
    "platform_machine": "x86_64",
    "extra": "",
}

_PIN = re.compile(r"^([A-Za-z0-9][A-Za-z0-9._-]*)==(\S+?)(?:\s*\\)?$")


def parse_lock(text: str) -> dict[str, tuple[Version, int]]:
    """Pins of a compiled requirements file: canonical name -> (version, number of hashes)."""
    pins: dict[str, tuple[Version, int]] = {}
    current: str | None = None
    for line in text.splitlines():
        match = _PIN.match(line)
        if match:
            name = canonicalize_name(match[1])
            if name in pins:
                raise ValueError(f"{name} pinned twice")
            current = name
            pins[name] = (Version(match[2]), 0)
        elif current and line.strip().startswith("--hash=sha256:"):
            version, hashes = pins[current]
            pins[current] = (version, hashes + 1)
        elif line.strip() and not line.lstrip().startswith("#"):
            raise ValueError(f"unexpected line in the lock: {line!r}")
    return pins


def applies(requirement: Requirement) -> bool:
    """Whether a requirement's marker holds in the image (no marker: always)."""
    marker: Marker | None = requirement.marker
    return marker is None or marker.evaluate(IMAGE_ENVIRONMENT)


def unmet(requirements: list[str], pins: dict[str, tuple[Version, int]]) -> list[str]:
    """Requirements that apply in the image and that the pins miss or contradict."""
    problems = []
    for text in requirements:
        requirement = Requirement(text)
        if not applies(requirement):
            continue
        name = canonicalize_name(requirement.name)
        if name not in pins:
            problems.append(f"{requirement}: not in the lock")
        elif not requirement.specifier.contains(pins[name][0], prereleases=True):
            problems.append(f"{requirement}: the lock has {pins[name][0]}")
    return problems


@pytest.fixture(scope="module")
def pyproject() -> dict[str, object]:
    with (ROOT / "pyproject.toml").open("rb") as file:
        return tomllib.load(file)


@pytest.fixture(scope="module")
def pins() -> dict[str, tuple[Version, int]]:
    return parse_lock(LOCK.read_text())


def test_every_runtime_dependency_is_pinned_within_its_range(
    pyproject: dict[str, dict[str, list[str]]], pins: dict[str, tuple[Version, int]]
) -> None:
    dependencies = pyproject["project"]["dependencies"]
    assert len(dependencies) > 5
    assert unmet(dependencies, pins) == []


def test_the_build_backend_is_pinned_within_its_range(
    pyproject: dict[str, dict[str, list[str]]], pins: dict[str, tuple[Version, int]]
) -> None:
    # The image builds the project with --no-build-isolation: setuptools comes from the lock.
    assert unmet(pyproject["build-system"]["requires"], pins) == []


def test_every_pin_carries_a_hash(pins: dict[str, tuple[Version, int]]) -> None:
    # pip's --require-hashes mode refuses a pin without one.
    assert [name for name, (_, hashes) in pins.items() if hashes == 0] == []


def test_the_check_sees_a_pin_outside_the_range_or_missing() -> None:
    # The checks above must be able to fail: a pin below the range, a missing package, and a
    # marker that excludes the image (PEP 508: sys_platform is "linux" there).
    pins = parse_lock("numpy==1.25.0 \\\n    --hash=sha256:00\n")
    assert unmet(["numpy>=1.26"], pins) == ["numpy>=1.26: the lock has 1.25.0"]
    assert unmet(["scipy>=1.11"], pins) == ["scipy>=1.11: not in the lock"]
    assert unmet(["pywin32>=300; sys_platform == 'win32'"], pins) == []
    assert unmet(["uvloop>=0.23; sys_platform != 'win32'"], pins) == [
        'uvloop>=0.23; sys_platform != "win32": not in the lock'
    ]
    with pytest.raises(ValueError, match="pinned twice"):
        parse_lock("tqdm==4.66.0\nTQDM==4.67.0\n")


def test_the_lock_says_how_to_regenerate_it_as_the_developer_guide_does() -> None:
    header = LOCK.read_text().splitlines()[:2]
    command = header[1].removeprefix("#").strip()
    assert "uv pip compile pyproject.toml" in command
    assert "-o requirements/container.lock" in command
    assert command in (ROOT / "DEVELOPERS.md").read_text()


def test_the_dockerfile_installs_the_lock_and_keeps_no_list_of_its_own() -> None:
    dockerfile = (ROOT / "Dockerfile").read_text()
    assert "-r /ctx/requirements/container.lock" in dockerfile
    assert re.search(r"^\s+[A-Za-z0-9_.-]+==\S+", dockerfile, re.MULTILINE) is None
