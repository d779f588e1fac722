// Boxed<T>: a heap-held T with value semantics (deep copy), for the large or dynamically sized
// estimators and detectors: a channel block (channel.h) then holds one pointer for them, and a
// detector slot's std::variant stays as small as its small alternatives while remaining copyable.
// Copy-assignment between two boxes assigns the T in place, so a reused rollback backup of the same
// kind and size (EstimatorSlot::SaveTo) does not allocate.
#pragma once

#include <memory>
#include <utility>

namespace bayline::pipeline {

template <typename T>
class Boxed {
 public:
  explicit Boxed(T value) : ptr_(std::make_unique<T>(std::move(value))) {}
  Boxed(const Boxed& other) : ptr_(std::make_unique<T>(*other.ptr_)) {}
  Boxed(Boxed&&) noexcept = default;
  Boxed& operator=(const Boxed& other) {
    if (this != &other) *ptr_ = *other.ptr_;
    return *this;
  }
  Boxed& operator=(Boxed&&) noexcept = default;

  T& operator*() { return *ptr_; }
  const T& operator*() const { return *ptr_; }
  T* operator->() { return ptr_.get(); }
  const T* operator->() const { return ptr_.get(); }

 private:
  std::unique_ptr<T> ptr_;
};

// Unwrap(slot alternative): the estimator or detector whether it is held inline or boxed, so code
// visiting a slot variant treats both alike.
template <typename T>
T& Unwrap(T& e) {
  return e;
}
template <typename T>
T& Unwrap(Boxed<T>& e) {
  return *e;
}
template <typename T>
const T& Unwrap(const T& e) {
  return e;
}
template <typename T>
const T& Unwrap(const Boxed<T>& e) {
  return *e;
}

}  // namespace bayline::pipeline
