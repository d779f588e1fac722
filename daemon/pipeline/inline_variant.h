// InlineVariant<Ts...>: one object of one of the types Ts, held in storage that the caller sizes
// for that alternative alone. A std::variant is as large as its largest alternative; a channel
// keeps its estimators in one heap block (channel.h), and with InlineVariant each takes only
// kHeaderBytes + its own size (a gaussian channel's ls, ml and map slots: 208 + 80 + 192 bytes
// instead of 3 x 208).
//
// Layout of one InlineVariant in its storage: [index, padded to kHeaderBytes][the T object].
// StorageSize(index) / StorageSizeOf<T>() is the number of bytes to provide (a multiple of
// kAlignment), at an address aligned to kAlignment.
//
// Lifetime: `new (storage) InlineVariant(std::in_place_type<T>, factory)` constructs the T
// returned by factory() after the header; Destroy() ends the T's lifetime (the InlineVariant itself
// is trivially destructible, so the storage can then be released). Not copyable or movable: its
// object lives past sizeof(*this). Visit(f) calls f with the object as T& (const T& on a const
// InlineVariant).
#pragma once

#include <algorithm>
#include <cstddef>
#include <cstdint>
#include <new>
#include <tuple>
#include <type_traits>
#include <utility>

namespace bayline::pipeline {

template <typename... Ts>
class InlineVariant {
  static_assert(sizeof...(Ts) > 0 && sizeof...(Ts) < 256, "between 1 and 255 alternatives");

 public:
  static constexpr std::size_t kAlignment = std::max({alignof(uint64_t), alignof(Ts)...});
  static constexpr std::size_t kHeaderBytes = kAlignment;

  // Index of T among Ts (T must occur exactly once).
  template <typename T>
  static constexpr std::size_t kIndexOf = [] {
    static_assert((std::is_same_v<T, Ts> + ...) == 1, "T must be exactly one of the alternatives");
    std::size_t i = 0;
    (void)((std::is_same_v<T, Ts> ? false : (++i, true)) && ...);  // counts until T is found
    return i;
  }();

  template <typename T>
  static constexpr std::size_t StorageSizeOf() {
    return kHeaderBytes + (sizeof(T) + kAlignment - 1) / kAlignment * kAlignment;
  }
  static constexpr std::size_t StorageSize(std::size_t index) {
    constexpr std::size_t kSizes[] = {StorageSizeOf<Ts>()...};
    return kSizes[index];
  }

  // Constructs the T returned by factory() after the header. Only for placement new into storage
  // of StorageSizeOf<T>() bytes (directly, or as the only member of a class that is).
  template <typename T, typename Factory>
  InlineVariant(std::in_place_type_t<T>, Factory&& factory)
      : index_(static_cast<uint8_t>(kIndexOf<T>)) {
    ::new (static_cast<void*>(payload())) T(std::forward<Factory>(factory)());
  }

  InlineVariant(const InlineVariant&) = delete;
  InlineVariant& operator=(const InlineVariant&) = delete;

  void Destroy() {
    Visit([](auto& object) {
      using T = std::decay_t<decltype(object)>;
      object.~T();
    });
  }

  std::size_t index() const { return index_; }

  template <typename T>
  T* get_if() {
    return index_ == kIndexOf<T> ? std::launder(reinterpret_cast<T*>(payload())) : nullptr;
  }
  template <typename T>
  const T* get_if() const {
    return index_ == kIndexOf<T> ? std::launder(reinterpret_cast<const T*>(payload())) : nullptr;
  }

  // f must return the same type for every alternative (as with std::visit).
  template <typename F>
  decltype(auto) Visit(F&& f) {
    using R = std::invoke_result_t<F&, std::tuple_element_t<0, std::tuple<Ts...>>&>;
    using Thunk = R (*)(std::byte*, F&);
    static constexpr Thunk kTable[] = {
        [](std::byte* p, F& fn) -> R { return fn(*std::launder(reinterpret_cast<Ts*>(p))); }...};
    return kTable[index_](payload(), f);
  }
  template <typename F>
  decltype(auto) Visit(F&& f) const {
    using R = std::invoke_result_t<F&, const std::tuple_element_t<0, std::tuple<Ts...>>&>;
    using Thunk = R (*)(const std::byte*, F&);
    static constexpr Thunk kTable[] = {[](const std::byte* p, F& fn) -> R {
      return fn(*std::launder(reinterpret_cast<const Ts*>(p)));
    }...};
    return kTable[index_](payload(), f);
  }

 private:
  std::byte* payload() { return reinterpret_cast<std::byte*>(this) + kHeaderBytes; }
  const std::byte* payload() const {
    return reinterpret_cast<const std::byte*>(this) + kHeaderBytes;
  }

  alignas(kAlignment) uint8_t index_;
};

}  // namespace bayline::pipeline
