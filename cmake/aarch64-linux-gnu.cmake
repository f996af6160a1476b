# Cross build for 64-bit ARM Linux (Raspberry Pi 3/4/5 running 64-bit
# Raspberry Pi OS, which is Debian 12 arm64).
#
# Uses Debian's multiarch layout: the cross compiler from
# gcc-aarch64-linux-gnu + libc6-dev-arm64-cross, and the libraries as
# ordinary :arm64 packages under /usr/lib/aarch64-linux-gnu.  The root of
# the target system is / itself, so no sysroot and no find-root-path modes.
#
#   cmake -S . -B build-arm64 -DCMAKE_TOOLCHAIN_FILE=cmake/aarch64-linux-gnu.cmake
#
# Tests run through qemu-user (CMAKE_CROSSCOMPILING_EMULATOR); set
# QEMU_CPU=cortex-a72 in the environment to emulate a Pi 4 instead of
# qemu's feature-rich default CPU.
set(CMAKE_SYSTEM_NAME Linux)
set(CMAKE_SYSTEM_PROCESSOR aarch64)
set(CMAKE_LIBRARY_ARCHITECTURE aarch64-linux-gnu)
set(CMAKE_C_COMPILER aarch64-linux-gnu-gcc)

# Only the target's .pc files: an inherited PKG_CONFIG_PATH or the default
# search path would hand the linker the amd64 libraries.
set(ENV{PKG_CONFIG_LIBDIR} "/usr/lib/aarch64-linux-gnu/pkgconfig:/usr/share/pkgconfig")
set(ENV{PKG_CONFIG_PATH} "")

# No -L: the :arm64 libc6 package installs the dynamic loader in /lib, so
# qemu finds the target's loader and libraries in / as they are.
find_program(LATTICED_QEMU NAMES qemu-aarch64 qemu-aarch64-static)
if(LATTICED_QEMU)
  set(CMAKE_CROSSCOMPILING_EMULATOR "${LATTICED_QEMU}")
endif()
